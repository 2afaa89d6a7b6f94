import { createRequire } from 'node:module';
import { availableParallelism } from 'node:os';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { ExportFormat } from './sweeps.export.ts';
import { reviveError, type JudgedSweep, type JudgeTask, type PreparationFailure, type PreparedSweep, type PrepareTask, type PreparationTask } from './sweeps.preparation.ts';

// Reading and analysing a 100,000-point sweep takes a few hundred milliseconds of CPU, and so does
// writing one as CSV (900,000 numbers to text). Done on the
// event loop, that stalls every other request of the process for as long (measured: 0.4–0.8 s per
// upload); done in slices with setImmediate between them, ten concurrent uploads still queue their
// slices ahead of a small calculation. Worker threads keep the event loop free; one fewer than the
// cores, so the event loop keeps a core of its own, and tasks queue for a free worker.
const WORKER_COUNT = Math.max(1, Math.min(4, availableParallelism() - 1));
const WORKER_URL = new URL('./sweeps.prepare-worker.ts', import.meta.url);

type Reply = { id: number; ok: true; result: PreparedSweep | JudgedSweep | Uint8Array } | { id: number; ok: false; failure: PreparationFailure };
type Pending = { resolve: (v: PreparedSweep | JudgedSweep | Uint8Array) => void; reject: (e: Error) => void };

/**
 * The worker runs TypeScript like the server does, through tsx; on Node 20 a worker does not inherit
 * the `--import tsx` loader, so a small bootstrap registers it before loading the worker module.
 */
function workerBootstrap(): string {
  // The ESM build of tsx's API: `require.resolve` finds the CommonJS one.
  const tsxApi = pathToFileURL(createRequire(import.meta.url).resolve('tsx/esm/api').replace(/\.cjs$/, '.mjs')).href;
  return `import(${JSON.stringify(tsxApi)}).then((tsx) => { tsx.register(); return import(${JSON.stringify(WORKER_URL.href)}); });`;
}

class PreparationWorker {
  private worker: Worker | undefined;
  private readonly pending = new Map<number, Pending>();
  private nextId = 1;

  get load(): number {
    return this.pending.size;
  }

  run(task: PreparationTask, transfer: ArrayBuffer[]): Promise<PreparedSweep | JudgedSweep | Uint8Array> {
    const worker = this.worker ?? this.start();
    const id = this.nextId++;
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve, reject });
      worker.ref();
      worker.postMessage({ id, task }, transfer);
    });
  }

  private start(): Worker {
    const worker = new Worker(workerBootstrap(), { eval: true, execArgv: [] });
    // An idle worker must not keep a finished process (a test, a CLI) alive.
    worker.unref();
    worker.on('message', (reply: Reply) => {
      const waiting = this.pending.get(reply.id);
      if (!waiting) return;
      this.pending.delete(reply.id);
      if (this.pending.size === 0) worker.unref();
      if (reply.ok) waiting.resolve(reply.result);
      else waiting.reject(reviveError(reply.failure));
    });
    const fail = (err: Error) => {
      if (this.worker === worker) this.worker = undefined;
      for (const waiting of this.pending.values()) waiting.reject(err);
      this.pending.clear();
    };
    worker.on('error', fail);
    worker.on('exit', (code) => fail(new Error(`the sweep worker stopped (exit code ${code})`)));
    this.worker = worker;
    return worker;
  }

  async stop(): Promise<void> {
    const worker = this.worker;
    this.worker = undefined;
    if (worker) await worker.terminate();
  }
}

const workers = Array.from({ length: WORKER_COUNT }, () => new PreparationWorker());

function leastBusy(): PreparationWorker {
  let best = workers[0]!;
  for (const w of workers) if (w.load < best.load) best = w;
  return best;
}

function transferOf(bytes: Uint8Array): ArrayBuffer[] {
  // Only a buffer that is the view's own can move; pooled or shared ones are copied.
  return bytes.buffer instanceof ArrayBuffer && bytes.byteOffset === 0 && bytes.byteLength === bytes.buffer.byteLength ? [bytes.buffer] : [];
}

/** Reads, moves and analyses an upload off the event loop. Errors keep their class (SweepFileError, RfInputError). */
export function prepareInWorker(task: Omit<PrepareTask, 'task'>): Promise<PreparedSweep> {
  return leastBusy().run({ task: 'prepare', ...task }, transferOf(task.source.bytes)) as Promise<PreparedSweep>;
}

/** Re-analyses stored points by other judging figures off the event loop. */
export function judgeInWorker(task: Omit<JudgeTask, 'task'>): Promise<JudgedSweep> {
  return leastBusy().run({ task: 'judge', ...task }, transferOf(task.packed)) as Promise<JudgedSweep>;
}

/** Formats a slice of an export off the event loop: the bytes to write. */
export async function formatInWorker(packed: Buffer, referenceOhm: number, format: ExportFormat): Promise<Buffer> {
  const bytes = (await leastBusy().run({ task: 'format', packed, referenceOhm, format }, transferOf(packed))) as Uint8Array;
  return Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
}

/** Ends the worker threads (they start again on the next task). */
export async function stopSweepWorkers(): Promise<void> {
  await Promise.all(workers.map((w) => w.stop()));
}
