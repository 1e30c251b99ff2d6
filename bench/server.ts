/**
 * Live server under load: 20 concurrent sessions, all started together, each running the whole
 * cabin warm-up demo (1200 simulated seconds, every demand step and knob slew of it) at 100× real
 * time. Sustained speed: the slowest session's simulated time over its wall time since its start
 * was acknowledged (start-up included), when it reaches the end of the demo. Also reported: the
 * frame rate each session receives (target 20–30 frames/s whatever the speed), how far behind the
 * pace sessions fell, and the server's CPU use (process.cpuUsage of this process; the websocket
 * clients run in a child process). Printed, never asserted.
 */
import { spawn } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { autoSessionThreads } from '../src/cli/commands/serve.ts';
import { startServer } from '../src/server/server.ts';
import type { BenchResult } from './types.ts';

const SESSIONS = 20;
/** Session hosts: one per core of this machine (the main thread keeps the sockets). */
const THREADS = autoSessionThreads();
const SPEED = 100;
/** The warm-up demo's duration (cases/buck-cabin-warmup.yaml, sim.durationS). */
const END_S = 1200;
const TIMEOUT_S = (2 * END_S) / SPEED;
const TARGET_FRAMES_PER_S = 20;

interface ClientReport {
  wallS: number;
  /** CPU the clients' own process used over the window (s): on this machine it competes with the server. */
  clientCpuS: number;
  sessions: Array<{
    reachedEnd: boolean;
    frames: number;
    framesPerS: number;
    simSpeed: number;
    /** Simulated time at the last frame over wall time since the start was acknowledged (start-up included). */
    speedSinceStart: number;
    /** Largest lag behind the requested pace seen in any frame (wall seconds). */
    maxLagS: number;
    /** Lag behind the requested pace at the last frame (wall seconds). */
    finalLagS: number;
    reportedSpeed: number;
    kBytesPerS: number;
    merged: number;
    droppedRecords: number;
    errors: number;
  }>;
}

const stats = (xs: number[]) => ({
  min: Math.min(...xs),
  mean: xs.reduce((a, b) => a + b, 0) / xs.length,
  max: Math.max(...xs),
});

export async function benchServer(): Promise<BenchResult> {
  const server = await startServer({ port: 0, maxSessions: SESSIONS + 4, sessionThreads: THREADS, log: () => undefined });
  try {
    const script = fileURLToPath(new URL('./serverClients.mjs', import.meta.url));
    const child = spawn(process.execPath, [script, `${server.url.replace(/^http/, 'ws')}ws`, String(SESSIONS), String(END_S), String(SPEED), String(TIMEOUT_S)], {
      stdio: ['ignore', 'pipe', 'inherit'],
    });
    let out = '';
    let cpu0: NodeJS.CpuUsage | undefined;
    let mem0 = 0;
    let cpu1: NodeJS.CpuUsage | undefined;
    let t0 = 0;
    let t1 = 0;
    let peakRss = 0;
    const sampler = setInterval(() => (peakRss = Math.max(peakRss, process.memoryUsage().rss)), 250);
    const report = await new Promise<ClientReport>((resolve, reject) => {
      child.stdout.on('data', (d: Buffer) => {
        out += d.toString();
        if (!cpu0 && out.includes('started\n')) {
          cpu0 = process.cpuUsage();
          t0 = performance.now();
          mem0 = process.memoryUsage().rss;
        }
        const nl = out.lastIndexOf('}\n');
        if (nl >= 0 && !cpu1) {
          cpu1 = process.cpuUsage(cpu0);
          t1 = performance.now();
          try {
            resolve(JSON.parse(out.slice(out.indexOf('{'), nl + 1)) as ClientReport);
          } catch (e) {
            reject(e);
          }
        }
      });
      child.on('exit', (code) => {
        if (!cpu1) reject(new Error(`bench clients exited with ${code} before reporting`));
      });
    });
    clearInterval(sampler);
    const wallS = (t1 - t0) / 1000;
    const cpuS = (cpu1!.user + cpu1!.system) / 1e6;
    const fps = stats(report.sessions.map((s) => s.framesPerS));
    const speed = stats(report.sessions.map((s) => s.simSpeed));
    const sinceStart = stats(report.sessions.map((s) => s.speedSinceStart));
    const lag = stats(report.sessions.map((s) => s.maxLagS));
    const finalLag = stats(report.sessions.map((s) => s.finalLagS));
    const kbps = stats(report.sessions.map((s) => s.kBytesPerS));
    // Sustained: the slowest session's simulated time over its wall time since start.
    const value = sinceStart.min;
    const reached = report.sessions.filter((s) => s.reachedEnd).length;
    const details = {
      sessions: SESSIONS,
      requestedSpeed: SPEED,
      simulatedS: END_S,
      sessionsThatReachedTheEnd: reached,
      wallS,
      framesPerSessionPerS: fps,
      simulatedSpeedPerSession: speed,
      simulatedSpeedSinceStart: sinceStart,
      maxLagBehindPaceS: lag,
      finalLagBehindPaceS: finalLag,
      kBytesPerSessionPerS: kbps,
      serverCpuS: cpuS,
      serverCpuPercentOfOneCore: (100 * cpuS) / wallS,
      sessionThreads: THREADS,
      clientCpuPercentOfOneCore: (100 * report.clientCpuS) / wallS,
      serverRssMB: { atStart: mem0 / 1e6, peak: peakRss / 1e6 },
      mergedFrames: report.sessions.reduce((a, s) => a + s.merged, 0),
      errors: report.sessions.reduce((a, s) => a + s.errors, 0),
    };
    console.log(
      `server: ${SESSIONS} sessions at ${SPEED}×, ${reached} of them through the ${END_S} s demo in ${wallS.toFixed(1)} s — frames/s per session ${fps.min.toFixed(1)}/${fps.mean.toFixed(1)}/${fps.max.toFixed(1)} (min/mean/max), ` +
        `simulated speed between first and last frame ${speed.min.toFixed(0)}/${speed.mean.toFixed(0)}/${speed.max.toFixed(0)}×, since start ${sinceStart.min.toFixed(1)}/${sinceStart.mean.toFixed(1)}/${sinceStart.max.toFixed(1)}×, ` +
        `lag behind pace largest ${lag.max.toFixed(2)} s, at the end ${finalLag.max.toFixed(2)} s, server CPU ${details.serverCpuPercentOfOneCore.toFixed(0)} % of one core (${THREADS} session threads; the clients' process ${details.clientCpuPercentOfOneCore.toFixed(0)} %), peak RSS ${(peakRss / 1e6).toFixed(0)} MB`,
    );
    return {
      id: 'server',
      label: `live server: ${SESSIONS} sessions at ${SPEED}×, slowest session's simulated s per wall s since start (frames/s ≥ ${TARGET_FRAMES_PER_S} each: ${fps.min >= TARGET_FRAMES_PER_S ? 'yes' : 'NO'})`,
      value,
      target: SPEED,
      ratio: value / SPEED,
      details,
    };
  } finally {
    await server.close();
  }
}
