// Websocket clients for bench/server.ts, in their own process so the server's CPU figure is the
// server's alone. Usage: node bench/serverClients.mjs URL N SECONDS SPEED → one JSON line on stdout.
import { WebSocket } from 'ws';

const [url, nArg, secondsArg, speedArg] = process.argv.slice(2);
const n = Number(nArg);
const seconds = Number(secondsArg);
const speed = speedArg === 'max' ? 'max' : Number(speedArg);

function client(i) {
  return new Promise((resolve) => {
    const ws = new WebSocket(url);
    const s = { i, frames: 0, bytes: 0, firstT: NaN, lastT: NaN, achievedSpeed: NaN, merged: 0, dropped: 0, errors: 0, t0: 0, t1: 0, ws, startMs: NaN, lastMs: NaN, maxLagS: 0 };
    ws.on('message', (d) => {
      const m = JSON.parse(String(d));
      if (m.type === 'scenario' && s.t0 === 0) {
        ws.send(JSON.stringify({ v: 1, type: 'speed', speed }));
        ws.send(JSON.stringify({ v: 1, type: 'start' }));
      }
      if (m.type === 'status' && m.ack === 'start') {
        s.startMs = performance.now();
        resolve(s);
      }
      if (m.type === 'error') s.errors++;
      // Behind the pace set at the start acknowledgement (wall seconds), start-up included.
      if (m.type === 'frame' && m.state === 'running' && typeof speed === 'number' && s.t1 === 0)
        s.maxLagS = Math.max(s.maxLagS, (performance.now() - s.startMs) / 1000 - m.tS / speed);
      if (m.type === 'frame' && m.state === 'running' && s.t0 > 0 && s.t1 === 0) {
        s.frames++;
        s.bytes += d.length;
        if (Number.isNaN(s.firstT)) s.firstT = m.tS;
        s.lastT = m.tS;
        s.lastMs = performance.now();
        s.achievedSpeed = m.achievedSpeed;
        s.merged += m.merged;
        s.dropped += m.droppedRecords;
      }
    });
    ws.on('error', () => resolve(s));
  });
}

const sessions = await Promise.all(Array.from({ length: n }, (_, i) => client(i)));
process.stdout.write('started\n');
const t0 = performance.now();
const cpu0 = process.cpuUsage();
for (const s of sessions) s.t0 = t0;
await new Promise((r) => setTimeout(r, seconds * 1000));
const t1 = performance.now();
const cpu = process.cpuUsage(cpu0);
for (const s of sessions) s.t1 = t1;
const wallS = (t1 - t0) / 1000;
const out = sessions.map((s) => ({
  frames: s.frames,
  framesPerS: s.frames / wallS,
  simSpeed: (s.lastT - s.firstT) / wallS,
  // Simulated time at the last frame over the wall time since the start was acknowledged.
  speedSinceStart: s.lastT / ((s.lastMs - s.startMs) / 1000),
  maxLagS: s.maxLagS,
  finalLagS: (s.lastMs - s.startMs) / 1000 - s.lastT / speed,
  reportedSpeed: s.achievedSpeed,
  kBytesPerS: s.bytes / 1024 / wallS,
  merged: s.merged,
  droppedRecords: s.dropped,
  errors: s.errors,
}));
for (const s of sessions) s.ws.terminate();
process.stdout.write(`${JSON.stringify({ wallS, clientCpuS: (cpu.user + cpu.system) / 1e6, sessions: out })}\n`);
