// Websocket clients for bench/server.ts, in their own process so the server's CPU figure is the
// server's alone. Usage: node bench/serverClients.mjs URL N END_S SPEED TIMEOUT_S → one JSON line
// on stdout. Every session starts at SPEED; the window ends when each has simulated END_S seconds
// (a frame with tS ≥ END_S arrived) or after TIMEOUT_S of wall time.
import { WebSocket } from 'ws';

const [url, nArg, endArg, speedArg, timeoutArg] = process.argv.slice(2);
const n = Number(nArg);
const endS = Number(endArg);
const speed = speedArg === 'max' ? 'max' : Number(speedArg);
const timeoutS = Number(timeoutArg);
let finish = () => undefined;
const allDone = new Promise((r) => (finish = r));

function client(i) {
  return new Promise((resolve) => {
    const ws = new WebSocket(url);
    const s = {
      i, frames: 0, bytes: 0, firstT: NaN, firstMs: NaN, lastT: NaN, lastMs: NaN, achievedSpeed: NaN, merged: 0, dropped: 0, errors: 0,
      counting: false, done: false, ws, startMs: NaN, maxLagS: 0,
    };
    ws.on('message', (d) => {
      const m = JSON.parse(String(d));
      if (m.type === 'scenario' && Number.isNaN(s.startMs) && !s.asked) {
        s.asked = true;
        ws.send(JSON.stringify({ v: 1, type: 'speed', speed }));
        ws.send(JSON.stringify({ v: 1, type: 'start' }));
      }
      if (m.type === 'status' && m.ack === 'start') {
        s.startMs = performance.now();
        resolve(s);
      }
      if (m.type === 'error') s.errors++;
      if (m.type !== 'frame' || m.state !== 'running' || s.done) return;
      const at = performance.now();
      // Behind the pace set at the start acknowledgement (wall seconds), start-up included.
      if (typeof speed === 'number') s.maxLagS = Math.max(s.maxLagS, (at - s.startMs) / 1000 - m.tS / speed);
      if (!s.counting) return;
      s.frames++;
      s.bytes += d.length;
      if (Number.isNaN(s.firstT)) {
        s.firstT = m.tS;
        s.firstMs = at;
      }
      s.lastT = m.tS;
      s.lastMs = at;
      s.achievedSpeed = m.achievedSpeed;
      s.merged += m.merged;
      s.dropped += m.droppedRecords;
      if (m.tS >= endS) {
        s.done = true;
        if (sessions.every((x) => x.done)) finish();
      }
    });
    ws.on('error', () => resolve(s));
  });
}

const sessions = [];
for (let i = 0; i < n; i++) sessions.push(client(i));
const started = await Promise.all(sessions);
sessions.splice(0, n, ...started);
process.stdout.write('started\n');
const t0 = performance.now();
const cpu0 = process.cpuUsage();
for (const s of sessions) s.counting = true;
const timer = setTimeout(finish, timeoutS * 1000);
await allDone;
clearTimeout(timer);
const t1 = performance.now();
const cpu = process.cpuUsage(cpu0);
const wallS = (t1 - t0) / 1000;
const out = sessions.map((s) => {
  const ownWallS = (s.lastMs - t0) / 1000;
  return {
    reachedEnd: s.done,
    frames: s.frames,
    framesPerS: s.frames / ownWallS,
    simSpeed: (s.lastT - s.firstT) / ((s.lastMs - s.firstMs) / 1000),
    // Simulated time at the last frame over the wall time since the start was acknowledged.
    speedSinceStart: s.lastT / ((s.lastMs - s.startMs) / 1000),
    maxLagS: s.maxLagS,
    finalLagS: (s.lastMs - s.startMs) / 1000 - s.lastT / speed,
    reportedSpeed: s.achievedSpeed,
    kBytesPerS: s.bytes / 1024 / ownWallS,
    merged: s.merged,
    droppedRecords: s.dropped,
    errors: s.errors,
  };
});
for (const s of sessions) s.ws.terminate();
process.stdout.write(`${JSON.stringify({ wallS, clientCpuS: (cpu.user + cpu.system) / 1e6, sessions: out })}\n`);
