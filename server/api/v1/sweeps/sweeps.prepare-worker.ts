// Worker thread entry: runs sweep preparation tasks posted by sweeps.preparer.ts, one at a time.
import { readlinkSync } from 'node:fs';
import { setPriority } from 'node:os';
import { parentPort } from 'node:worker_threads';
import { failureOf, runPreparationTask, type PreparationTask } from './sweeps.preparation.ts';

/**
 * Sweep work is bulk work: when the machine's cores are all busy, the event loop (every other
 * request of the process) should get the CPU first. On Linux a thread has its own nice value, so
 * this thread lowers only its own (raising niceness needs no privilege). Elsewhere it stays as is.
 */
function lowerOwnPriority(): void {
  try {
    const tid = Number(readlinkSync('/proc/thread-self').split('/').pop());
    if (Number.isInteger(tid) && tid > 0) setPriority(tid, 10);
  } catch {
    // Not Linux, or not allowed: the worker runs at the process's priority.
  }
}

lowerOwnPriority();

parentPort!.on('message', (message: { id: number; task: PreparationTask }) => {
  try {
    const result = runPreparationTask(message.task);
    // The packed points move to the main thread without a copy.
    const transfer: ArrayBuffer[] = [];
    const owned = (bytes: Uint8Array | null) => {
      // Only a view that covers its whole buffer can move; a slice of a shared pool is copied instead.
      if (bytes && bytes.byteLength > 0 && bytes.buffer instanceof ArrayBuffer && bytes.byteOffset === 0 && bytes.byteLength === bytes.buffer.byteLength && !transfer.includes(bytes.buffer)) transfer.push(bytes.buffer);
    };
    if (result instanceof Uint8Array) owned(result);
    else if ('measured' in result) {
      owned(result.measured);
      owned(result.moved);
    }
    parentPort!.postMessage({ id: message.id, ok: true, result }, transfer);
  } catch (err) {
    parentPort!.postMessage({ id: message.id, ok: false, failure: failureOf(err) });
  }
});
