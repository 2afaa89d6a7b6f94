// Gammaline walkthrough in plain Node (20 or later): global fetch, no dependencies.
//
// Refers a meter reading through a catalog cable, transforms a load through a line, and streams a
// 500-item NDJSON batch, printing each figure as name=value on its own line.
//
//   GAMMALINE_URL=http://127.0.0.1:8080 GAMMALINE_KEY=... node walkthrough.mjs

const API = `${process.env.GAMMALINE_URL.replace(/\/+$/, '')}/api/v1`;
const KEY = process.env.GAMMALINE_KEY;
// A 429 is retried at most this many times, and only when Retry-After is short: a spent daily quota
// answers with the seconds until 00:00 UTC, which an unattended program should report, not sleep through.
const MAX_RETRIES = 3;
const MAX_WAIT_S = 60;

/** POSTs and returns the 2xx response; waits out short 429s; exits on any other problem. */
async function post(path, body, contentType = 'application/json') {
  const data = typeof body === 'string' ? body : JSON.stringify(body);
  for (let attempt = 0; ; attempt++) {
    const response = await fetch(API + path, {
      method: 'POST',
      headers: { Authorization: `Bearer ${KEY}`, 'Content-Type': contentType },
      body: data,
    });
    if (response.ok) return response;
    const wait = response.headers.get('Retry-After') ?? '';
    if (response.status === 429 && attempt < MAX_RETRIES && /^\d+$/.test(wait) && Number(wait) <= MAX_WAIT_S) {
      console.error(`429 from ${path}: waiting ${wait} s (retry ${attempt + 1} of ${MAX_RETRIES})`);
      await response.body?.cancel();
      await new Promise((resolve) => setTimeout(resolve, Number(wait) * 1000));
      continue;
    }
    await fail(response);
  }
}

/** Prints an RFC 9457 problem (or whatever came instead) and exits non-zero. */
async function fail(response) {
  const text = await response.text();
  try {
    const problem = JSON.parse(text);
    console.error(`status=${problem.status ?? response.status}\ntitle=${problem.title}\ndetail=${problem.detail}`);
  } catch {
    console.error(`status=${response.status}\nbody=${JSON.stringify(text.slice(0, 500))}`);
  }
  process.exit(1);
}

// JSON.stringify keeps full precision (the shortest text that reads back as the same double) and
// writes null for the unbounded figures the API answers with null.
const show = (name, value) => console.log(`${name}=${JSON.stringify(value)}`);

// 1. A transmitter-end reading of 100 W forward, 4 W reflected: what happens at the antenna?
const refer = await (
  await post('/refer', {
    frequencyHz: 28_400_000,
    line: { cableId: 'rg-58', lengthM: 30 },
    direction: 'inputToLoad',
    reading: { forwardPowerW: 100, reflectedPowerW: 4 },
  })
).json();
show('referAtInputSwr', refer.atInput.swr);
show('referAtLoadSwr', refer.atLoad.swr);
show('referMatchedLossDb', refer.matchedLossDb);
show('referTotalLossDb', refer.totalLossDb);
show('referAtLoadNetPowerW', refer.atLoad.netPowerW);

// 2. A 72 + j18 ohm load at the far end of 30 m of RG-213 on 14.2 MHz.
const line = await (
  await post('/line', {
    frequencyHz: 14_200_000,
    line: { cableId: 'rg-213', lengthM: 30 },
    loadOhm: { re: 72, im: 18 },
    powerW: 100,
  })
).json();
show('lineInputOhmRe', line.inputOhm.re);
show('lineInputOhmIm', line.inputOhm.im);
show('lineAtInputSwr', line.atInput.swr);
show('lineTotalLossDb', line.totalLossDb);
show('lineLoadW', line.power.loadW);
for (const caution of line.cautions) console.error(`caution: ${caution}`);

// 3. 500 SWR values, 1.00 to 5.99, as NDJSON. (100 + i) / 100 is the double nearest to the decimal
// 1.xx, so every client sends the same numbers.
let items = '';
for (let i = 0; i < 500; i++) items += `${JSON.stringify({ op: 'mismatch', input: { swr: (100 + i) / 100 } })}\n`;
let ok = 0;
let failed = 0;
let picked = null;
let end = null;
const onLine = (text) => {
  if (text.trim() === '') return;
  const result = JSON.parse(text);
  if ('end' in result) {
    end = result;
  } else if (result.ok) {
    ok++;
    if (result.line === 250) picked = result.output.returnLossDb;
  } else {
    failed++;
    console.error(`line ${result.line}: ${result.problem.detail}`);
  }
};
const stream = await post('/batch', items, 'application/x-ndjson');
// Handle each line as soon as it has arrived; a chunk may end in the middle of a line, so keep the tail.
const reader = stream.body.pipeThrough(new TextDecoderStream()).getReader();
let pending = '';
for (;;) {
  const { value, done } = await reader.read();
  if (done) break;
  pending += value;
  let nl;
  while ((nl = pending.indexOf('\n')) !== -1) {
    onLine(pending.slice(0, nl));
    pending = pending.slice(nl + 1);
  }
}
onLine(pending);
// Only the closing line proves the answer is whole; without it the stream was cut off.
if (end === null) {
  console.error('the batch answer was cut off (no end line); send the items again');
  process.exit(1);
}
if (end.end !== 'complete') {
  console.error(`the batch stopped early: ${end.problem?.detail}`);
  process.exit(1);
}
show('batchOk', ok);
show('batchFailed', failed);
show('batchLine250ReturnLossDb', picked);
