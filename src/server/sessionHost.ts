/**
 * A session host: live sessions computed on a worker thread, so a server uses every core (the
 * main thread keeps the sockets, the hosts keep the simulations). Each host has its own pacing
 * loop (`TickScheduler`) for the sessions placed on it, and exchanges messages with the main thread in the
 * small message protocol below; `sessionPool.ts` is the other end.
 *
 * Frames are serialized here, off the main thread. Backpressure stays the main thread's
 * decision, mirrored here: a frame goes out only while fewer than two frames are in flight and
 * the socket's queue (as last reported by the main thread) is under the high-water mark;
 * otherwise the session merges its records into the next frame, as it does in-process.
 */
import { isMainThread, parentPort, workerData } from 'node:worker_threads';
import { caseLibrary } from './cases.ts';
import type { Command } from './protocol.ts';
import { TickScheduler } from './scheduler.ts';
import { Session, SessionError, type SessionOptions } from './session.ts';

export interface HostConfig {
  casesDir: string;
  defaultCase: string;
  frameHz: number;
  maxPointsPerFrame: number;
  traceMaxRecords: number;
  tickBudgetMs: number;
  frameHighWaterBytes: number;
}

/** Main thread → host. `req` numbers the requests that get a `done` answer. */
export type ToHost =
  | { t: 'open'; id: string; req: number }
  | { t: 'cmd'; id: string; req: number; cmd: Command }
  | { t: 'error'; id: string; code: Parameters<Session['error']>[0]; message: string; extra: Parameters<Session['error']>[2] }
  | { t: 'close'; id: string }
  | { t: 'sent'; id: string; bufferedBytes: number }
  | { t: 'call'; id: string; req: number; what: 'replay' | 'trace' };

/** Host → main thread. */
export type FromHost =
  | { t: 'ready' }
  | { t: 'msg'; id: string; frame: boolean; text: string }
  | { t: 'held'; id: string }
  | { t: 'running'; id: string; running: boolean }
  | { t: 'log'; line: string }
  | { t: 'done'; req: number; ok: true; value?: unknown }
  | { t: 'done'; req: number; ok: false; code: string; message: string };

interface Hosted {
  session: Session;
  framesInFlight: number;
  bufferedBytes: number;
}

/** The host's side of the protocol, on any message port (a worker's parentPort, or a test's channel). */
export function runSessionHost(port: { postMessage(m: FromHost): void; on(ev: 'message', f: (m: ToHost) => void): void }, cfg: HostConfig): void {
  const cases = caseLibrary(cfg.casesDir);
  const scheduler = new TickScheduler({ frameHz: cfg.frameHz, maxBudgetMs: cfg.tickBudgetMs, now: () => performance.now(), shrinkAbove: 1.2, growBelow: 1, minBudgetMs: 0.75 * cfg.tickBudgetMs });
  const hosted = new Map<string, Hosted>();
  let running = 0;
  const post = (m: FromHost): void => port.postMessage(m);
  const log = (line: string): void => post({ t: 'log', line });

  const options = (id: string): SessionOptions => ({
    cases,
    defaultCase: cfg.defaultCase,
    frameHz: cfg.frameHz,
    maxPointsPerFrame: cfg.maxPointsPerFrame,
    traceMaxRecords: cfg.traceMaxRecords,
    // As in-process: the host's tick budget is shared by its running sessions.
    budgetMs: () => Math.max(0.5, Math.min(20, cfg.tickBudgetMs / Math.max(1, running))),
    now: () => performance.now(),
    schedule: (s) => scheduler.add(s),
    onRunningChange: (on) => {
      running = Math.max(0, running + (on ? 1 : -1));
      post({ t: 'running', id, running: on });
    },
    log,
  });

  const open = (id: string): Hosted => {
    const h: Hosted = { session: undefined as unknown as Session, framesInFlight: 0, bufferedBytes: 0 };
    h.session = new Session(
      id,
      {
        send(msg) {
          const frame = msg.type === 'frame';
          if (frame) h.framesInFlight++;
          post({ t: 'msg', id, frame, text: JSON.stringify(msg) });
        },
        canSendFrame() {
          const ok = h.framesInFlight < 2 && h.bufferedBytes < cfg.frameHighWaterBytes;
          if (!ok) post({ t: 'held', id });
          return ok;
        },
      },
      options(id),
    );
    hosted.set(id, h);
    return h;
  };

  const answer = async (req: number, work: () => unknown): Promise<void> => {
    try {
      post({ t: 'done', req, ok: true, value: await work() });
    } catch (e) {
      const code = e instanceof SessionError ? e.code : 'internal';
      post({ t: 'done', req, ok: false, code, message: e instanceof Error ? e.message : String(e) });
    }
  };

  port.on('message', (m: ToHost) => {
    const h = hosted.get(m.id);
    switch (m.t) {
      case 'open':
        void answer(m.req, () => (h ?? open(m.id)).session.init());
        return;
      case 'cmd':
        void answer(m.req, () => h?.session.handle(m.cmd));
        return;
      case 'error':
        h?.session.error(m.code, m.message, m.extra);
        return;
      case 'close':
        if (h) {
          h.session.dispose();
          hosted.delete(m.id);
        }
        return;
      case 'sent':
        if (h) {
          h.framesInFlight = Math.max(0, h.framesInFlight - 1);
          h.bufferedBytes = m.bufferedBytes;
        }
        return;
      case 'call':
        void answer(m.req, () => {
          if (!h) throw new SessionError('notAllowed', 'no such live session');
          return m.what === 'replay' ? h.session.replay() : h.session.traceCsv();
        });
        return;
    }
  });
  post({ t: 'ready' });
}

if (!isMainThread && parentPort && (workerData as { lossdialSessionHost?: HostConfig } | undefined)?.lossdialSessionHost) {
  runSessionHost(parentPort as never, (workerData as { lossdialSessionHost: HostConfig }).lossdialSessionHost);
}
