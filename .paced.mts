import http from 'node:http';
const [base, key, path, rateS, secsS] = process.argv.slice(2);
const rate = Number(rateS), SECONDS = Number(secsS ?? 5);
const body = JSON.stringify({ forwardPowerW: 100, reflectedPowerW: 4 });
const agent = new http.Agent({ keepAlive: true, maxSockets: 16 });
const total = Math.round(rate * SECONDS);
const lat: number[] = []; const sendLag: number[] = [];
const started = performance.now();
let sent = 0; const inflight = new Set<Promise<void>>();
while (sent < total) {
  const due = started + (sent * 1000) / rate;
  const wait = due - performance.now();
  if (wait > 1) await new Promise((r) => setTimeout(r, wait - 1));
  else if (wait > 0) await new Promise((r) => setImmediate(r));
  while (sent < total && started + (sent * 1000) / rate <= performance.now()) {
    const dueAt = started + (sent * 1000) / rate; sent++;
    sendLag.push(performance.now() - dueAt);
    const p: Promise<void> = new Promise<void>((resolve) => {
      const t0 = performance.now();
      const req = http.request(base + path, { method: 'POST', agent, headers: { 'content-type': 'application/json', authorization: `Bearer ${key}` } }, (res) => { res.resume(); res.on('end', () => { lat.push(performance.now() - t0); resolve(); }); });
      req.end(body);
    }).finally(() => inflight.delete(p));
    inflight.add(p);
  }
}
await Promise.all(inflight);
const q = (a: number[], f: number) => { const s = [...a].sort((x, y) => x - y); return s[Math.floor(s.length * f)]!.toFixed(2); };
console.log(path, 'latency p50', q(lat, .5), 'p90', q(lat, .9), 'p99', q(lat, .99), 'max', q(lat, .9999), '| send lag p50', q(sendLag, .5), 'p99', q(sendLag, .99), 'max', q(sendLag, .9999));
agent.destroy();
