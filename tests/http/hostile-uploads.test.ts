import net from 'node:net';
import fc from 'fast-check';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analysedPointsToCsv } from '../../shared/sweep/csv.ts';
import { MAX_SWEEP_FILE_BYTES } from '../../server/api/v1/sweeps/sweeps.upload.ts';
import { createTestApp, type TestApp } from '../helpers/app.ts';
import { listen } from '../helpers/live-server.ts';

// Hostile sweep uploads: every file that cannot be read is a 400 RFC 9457 problem naming the line
// (`errors: [{ field: 'file', message: 'line N: …' }]`), a body too large is a 413 sent before the
// body is read (RFC 9110 §15.5.14), and exported CSV never carries a formula (OWASP CSV Injection).
// tests/http/sweeps.test.ts covers the ordinary mistakes; these are the deliberate ones.

let ctx: TestApp;
let live: Awaited<ReturnType<typeof listen>>;

beforeAll(async () => {
  ctx = await createTestApp();
  live = await listen(ctx.app);
});
afterAll(async () => {
  await live?.close();
  await ctx?.close();
});

function upload(file: string | Buffer, fileName: string, fields: Record<string, string> = {}) {
  let req = request(live.base).post('/api/v1/sweeps').set(ctx.auth);
  for (const [k, v] of Object.entries(fields)) req = req.field(k, v);
  return req.attach('file', Buffer.isBuffer(file) ? file : Buffer.from(file), fileName);
}

function expectLineProblem(res: request.Response, line?: number): void {
  expect(res.status, res.text).toBe(400);
  expect(res.headers['content-type']).toMatch(/^application\/problem\+json/);
  expect(res.body.errors).toEqual([{ field: 'file', message: expect.stringMatching(line === undefined ? /^line \d+: \S/ : new RegExp(`^line ${line}: \\S`)) }]);
  expect(res.body.detail).toMatch(/line \d+/);
}

const GOOD_TOUCHSTONE = '! ridge dipole\n# MHz S RI R 50\n7.000 0.10 0.20\n7.100 0.05 0.01\n7.200 0.12 -0.18\n';

describe('broken Touchstone files are 400 problems naming the line', () => {
  it('names the line where a truncated file stops mid-row', async () => {
    // Cut inside the last data row: one value of the pair is missing.
    const truncated = GOOD_TOUCHSTONE.slice(0, GOOD_TOUCHSTONE.lastIndexOf(' '));
    expectLineProblem(await upload(truncated, 'cut.s1p'), 5);
  });

  it('names the option line when it is wrong', async () => {
    for (const option of ['# MHz Q RI R 50', '# MHz S XY R 50', '# parsecs S RI R 50', '# MHz S RI R fifty', '# MHz S RI R -50', '# MHz S RI R 0']) {
      const res = await upload(`! wrong option line\n${option}\n7.0 0.1 0.2\n`, 'option.s1p');
      expectLineProblem(res, 2);
    }
  });

  it('names the line of a non-numeric, infinite or formula value', async () => {
    for (const bad of ['7.1 0.1 zero', '7.1 NaN 0.1', '7.1 Infinity 0.1', '7.1 1e999 0.1', '=7.1 0.1 0.2', '7.1 0.1 0.2 0.3 0.4']) {
      expectLineProblem(await upload(`# MHz S RI R 50\n7.0 0.1 0.2\n${bad}\n`, 'values.s1p'), 3);
    }
  });

  it('answers generated binary garbage with a line-naming 400, as Touchstone and as CSV', async () => {
    const garbage = fc.sample(fc.uint8Array({ minLength: 1, maxLength: 4096 }), { numRuns: 60, seed: 20260314 });
    for (const [i, bytes] of garbage.entries()) {
      expectLineProblem(await upload(Buffer.from(bytes), i % 2 === 0 ? 'garbage.s1p' : 'garbage.csv'));
    }
  });
});

describe('bodies too large are refused early (RFC 9110 §15.5.14, 413)', () => {
  /** Sends only the head of a request that claims `claimed` bytes and times how long the answer takes. */
  function claimHuge(path: string, contentType: string, claimed: number): Promise<{ status: number; ms: number; head: string }> {
    const url = new URL(live.base);
    return new Promise((resolve, reject) => {
      const started = performance.now();
      const socket = net.connect(Number(url.port), url.hostname);
      let data = '';
      const timer = setTimeout(() => {
        socket.destroy();
        resolve({ status: 0, ms: performance.now() - started, head: 'no answer' });
      }, 5_000);
      socket.on('data', (chunk) => {
        data += chunk.toString('latin1');
        const end = data.indexOf('\r\n\r\n');
        if (end === -1) return;
        clearTimeout(timer);
        socket.destroy();
        resolve({ status: Number(data.split(' ')[1]), ms: performance.now() - started, head: data.slice(0, end) });
      });
      socket.on('error', reject);
      socket.write(
        `POST ${path} HTTP/1.1\r\nHost: ${url.host}\r\n${ctx.auth.Authorization ? `Authorization: ${ctx.auth.Authorization}\r\n` : ''}` +
          `Content-Type: ${contentType}\r\nContent-Length: ${claimed}\r\n\r\n`,
      );
      socket.write('--b\r\nContent-Disposition: form-data; name="file"; filename="huge.s1p"\r\n\r\n# MHz S RI R 50\n');
    });
  }

  it('answers a multipart upload claiming 1 GB with 413 within a second, without waiting for the body', async () => {
    const answer = await claimHuge('/api/v1/sweeps', 'multipart/form-data; boundary=b', 1024 ** 3);
    expect(answer.status, answer.head).toBe(413);
    expect(answer.ms).toBeLessThan(1_000);
    expect(answer.head).toMatch(/content-type: application\/problem\+json/i);
  });

  it('answers JSON bodies claiming 1 GB with 413 within a second, the batch included', async () => {
    for (const path of ['/api/v1/sweeps', '/api/v1/line', '/api/v1/batch']) {
      const answer = await claimHuge(path, 'application/json', 1024 ** 3);
      expect(answer.status, `${path}: ${answer.head}`).toBe(413);
      expect(answer.ms).toBeLessThan(1_000);
    }
  });

  it('keeps memory bounded across many uploads at and over the file limit', async () => {
    const nearLimit = Buffer.alloc(MAX_SWEEP_FILE_BYTES - 1024, 0x41);
    const overLimit = Buffer.alloc(MAX_SWEEP_FILE_BYTES + 1024, 0x41);
    const before = process.memoryUsage();
    for (let i = 0; i < 12; i++) {
      const res = await upload(i % 2 === 0 ? nearLimit : overLimit, 'bulk.s1p');
      expect(res.status).toBe(i % 2 === 0 ? 400 : 413);
    }
    const after = process.memoryUsage();
    // Generous: twelve 8 MB uploads buffered and never released would add about 100 MB.
    expect(after.rss - before.rss).toBeLessThan(256 * 1024 * 1024);
    expect(after.heapUsed - before.heapUsed).toBeLessThan(128 * 1024 * 1024);
    expect((await request(live.base).get('/healthz')).status).toBe(200);
  });
});

describe('formulas never leave in exported CSV (OWASP CSV Injection)', () => {
  const FORMULAS = ['=HYPERLINK("http://evil.example","x")', '+cmd|\' /C calc\'!A0', '-2+3', '@SUM(1,1)', '\t=1', '\r=1'];

  it('stores a CSV with formulas in its text columns and exports only numbers and empty cells', async () => {
    const rows = ['frequency_hz,r_ohm,x_ohm,note', ...FORMULAS.map((f, i) => `${7_000_000 + i * 10_000},${50 + i},${i - 2},"${f.replace(/"/g, '""').replace(/\r/g, '')}"`)];
    const created = await upload(`${rows.join('\n')}\n`, '=cmd.csv', { name: '=HYPERLINK("http://evil.example")' });
    expect(created.status, created.text).toBe(201);
    const csv = await request(live.base).get(`/api/v1/sweeps/${created.body.id}/points.csv`).set(ctx.auth).expect(200);
    const cells = csv.text.split('\r\n').slice(1).filter(Boolean).flatMap((line) => line.split(','));
    for (const cell of cells) expect(cell).toMatch(/^(-?\d+(\.\d+)?(e[+-]\d+)?)?$/);
    expect(csv.headers['content-disposition']).not.toMatch(/filename="?[=+\-@]/);
  });

  it('refuses a formula in a numeric column with the line that holds it', async () => {
    expectLineProblem(await upload('frequency_hz,r_ohm,x_ohm\n7000000,50,0\n7100000,=1+49,0\n', 'formula.csv'), 3);
  });

  it('prefixes text cells that start a formula with a quote when the sweep name is exported', () => {
    const point = { frequencyHz: 7e6, loadOhm: { re: 50, im: 0 }, reflection: { re: 0, im: 0, magnitude: 0, angleDeg: 0 }, swr: 1, returnLossDb: null };
    for (const name of FORMULAS) {
      const [, row] = analysedPointsToCsv([point] as never, { sweepName: name }).split('\r\n');
      expect(row).toMatch(/^"?'/);
    }
  });
});
