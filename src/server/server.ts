/**
 * `startServer`: HTTP (express) and the live-session websocket endpoint on one port.
 *
 * Upgrades are handled by hand (`noServer`), so every refusal is decided before a session exists:
 * wrong path → 404, foreign Host or Origin → 403. Past the session limit the upgrade is accepted
 * only to say why (an error message) and close with 1013 "try again later" — a browser cannot read
 * the body of a refused upgrade, but it can read that.
 */
import { type IncomingMessage, type Server, createServer } from 'node:http';
import type { Duplex } from 'node:stream';
import type { Worker } from 'node:worker_threads';
import { fileURLToPath } from 'node:url';
import { WebSocket, WebSocketServer } from 'ws';
import { createApp } from './app.ts';
import { type CaseLibrary, caseLibrary } from './cases.ts';
import { type ConnectionLimits, type ConnectionStats, attachConnection } from './connection.ts';
import { PROTOCOL_VERSION } from './protocol.ts';
import { hostChecker, originAllowed } from './security.ts';
import { TickScheduler } from './scheduler.ts';
import { Session } from './session.ts';
import { type LiveSession, SessionPool } from './sessionPool.ts';

export interface ServeOptions {
  host?: string;
  port?: number;
  /** Case every new session starts with. */
  defaultCase?: string;
  casesDir?: string;
  webDir?: string;
  maxSessions?: number;
  frameHz?: number;
  maxPointsPerFrame?: number;
  traceMaxRecords?: number;
  /** Hard websocket payload cap (ws closes the connection with 1009 past it). */
  maxPayloadBytes?: number;
  limits?: Partial<ConnectionLimits>;
  /** Total compute a tick may spend across running sessions (ms), per thread that runs sessions. */
  tickBudgetMs?: number;
  /**
   * Worker threads that compute the sessions (0: on the main thread, beside the sockets). With
   * N ≥ 1 each new session goes to the least busy of N session hosts; the main thread keeps the
   * sockets, HTTP and the command checks.
   */
  sessionThreads?: number;
  log?: (line: string) => void;
}

export interface RunningServer {
  readonly url: string;
  readonly host: string;
  readonly port: number;
  readonly http: Server;
  /** Live sessions by id: `Session` objects when computed in-process (sessionThreads 0). */
  readonly sessions: ReadonlyMap<string, LiveSession>;
  /** The main thread's pacing loop (in-process sessions; its compute budget and load). */
  readonly scheduler: TickScheduler;
  /** Worker threads computing sessions (0: in-process). */
  readonly sessionThreads: number;
  /** Those threads, in placement order (a new session goes to the first with the fewest). */
  sessionHostWorkers(): readonly Worker[];
  /** Per-session transport figures: bytes queued to the client now, frames sent and held back. */
  connectionStats(): Map<string, { bufferedBytes: number; framesSent: number; framesHeld: number; messagesSent: number }>;
  close(): Promise<void>;
}

const ROOT = fileURLToPath(new URL('../..', import.meta.url));

export const DEFAULTS = Object.freeze({
  host: '127.0.0.1',
  port: 8080,
  defaultCase: 'buck-cabin-warmup',
  maxSessions: 8,
  frameHz: 25,
  maxPointsPerFrame: 60,
  traceMaxRecords: 100_000,
  maxPayloadBytes: 1024 * 1024,
  tickBudgetMs: 32,
  limits: {
    maxMessageBytes: 192 * 1024,
    commandsPerSecond: 40,
    commandBurst: 80,
    maxQueuedCommands: 16,
    frameHighWaterBytes: 256 * 1024,
    hardCapBytes: 8 * 1024 * 1024,
    heartbeatMs: 15_000,
  } satisfies ConnectionLimits,
});

/** Thrown when the port is taken or the address cannot be bound: a message the user can act on. */
export class ListenError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'ListenError';
  }
}

function refuse(socket: Duplex, status: number, text: string): void {
  socket.write(`HTTP/1.1 ${status} ${text}\r\nConnection: close\r\nContent-Type: text/plain\r\nContent-Length: ${Buffer.byteLength(text)}\r\n\r\n${text}`);
  socket.destroy();
}

export async function startServer(opts: ServeOptions = {}): Promise<RunningServer> {
  const host = opts.host ?? DEFAULTS.host;
  const port = opts.port ?? DEFAULTS.port;
  const log = opts.log ?? (() => undefined);
  const frameHz = opts.frameHz ?? DEFAULTS.frameHz;
  const maxSessions = opts.maxSessions ?? DEFAULTS.maxSessions;
  const traceMaxRecords = opts.traceMaxRecords ?? DEFAULTS.traceMaxRecords;
  const limits: ConnectionLimits = { ...DEFAULTS.limits, ...opts.limits };
  const cases: CaseLibrary = caseLibrary(opts.casesDir ?? `${ROOT}cases`);
  const defaultCase = opts.defaultCase ?? DEFAULTS.defaultCase;
  if ((await cases.read(defaultCase)) === undefined)
    throw new ListenError(`no case named ${JSON.stringify(defaultCase)}; known cases: ${(await cases.list()).join(', ') || '(none)'}`);
  const tickBudgetMs = opts.tickBudgetMs ?? DEFAULTS.tickBudgetMs;
  const hostAllowed = hostChecker(host);

  const sessions = new Map<string, LiveSession>();
  const scheduler = new TickScheduler({ frameHz, maxBudgetMs: tickBudgetMs, now: () => performance.now() });
  const sessionThreads = Math.max(0, Math.floor(opts.sessionThreads ?? 0));
  const maxPointsPerFrame = opts.maxPointsPerFrame ?? DEFAULTS.maxPointsPerFrame;
  const pool =
    sessionThreads > 0
      ? new SessionPool(
          sessionThreads,
          {
            casesDir: opts.casesDir ?? `${ROOT}cases`,
            defaultCase,
            frameHz,
            maxPointsPerFrame,
            traceMaxRecords,
            // A host thread has no sockets to serve between rounds: its sessions may use the period.
            tickBudgetMs: opts.tickBudgetMs ?? 1000 / frameHz,
            frameHighWaterBytes: limits.frameHighWaterBytes,
          },
          log,
        )
      : undefined;
  try {
    await pool?.ready();
  } catch (e) {
    await pool?.close();
    throw e;
  }
  const stats = new Map<string, ConnectionStats>();
  let pendingConnections = 0;
  let running = 0;

  const app = createApp({
    webDir: opts.webDir ?? `${ROOT}web`,
    cases,
    defaultCase,
    hostAllowed,
    session: (id) => sessions.get(id),
    sessionCount: () => sessions.size,
    maxSessions,
  });
  const http = createServer(app);
  // Connections from a stalled client must not hold the server open forever.
  http.headersTimeout = 20_000;
  http.requestTimeout = 60_000;
  const wss = new WebSocketServer({ noServer: true, maxPayload: opts.maxPayloadBytes ?? DEFAULTS.maxPayloadBytes, perMessageDeflate: false });

  wss.on('connection', (ws: WebSocket) => {
    pendingConnections--;
    const { session, stats: st } = attachConnection(ws, {
      limits,
      serverName: 'lossdial live bench',
      frameHz,
      traceMaxRecords,
      cases: () => cases.list(),
      register: (s) => {
        sessions.set(s.id, s);
      },
      unregister: (s) => {
        sessions.delete(s.id);
        stats.delete(s.id);
      },
      runningChanged: (d) => {
        running = Math.max(0, running + d);
      },
      log,
      createSession: (id, tr) =>
        pool
          ? pool.open(id, tr)
          : new Session(id, tr, {
              cases,
              defaultCase,
              frameHz,
              maxPointsPerFrame,
              traceMaxRecords,
              // The tick budget is shared: many running sessions each get a smaller slice, so the event
              // loop keeps its rhythm and every session still gets its frames.
              budgetMs: () => Math.max(0.5, Math.min(20, tickBudgetMs / Math.max(1, running))),
              now: () => performance.now(),
              schedule: (s) => scheduler.add(s),
              onRunningChange: (on) => tr.runningChanged(on),
              log,
            }),
    });
    if (sessions.has(session.id)) stats.set(session.id, st);
  });

  const refuseFull = (ws: WebSocket): void => {
    ws.on('error', () => undefined);
    const msg = {
      v: PROTOCOL_VERSION,
      type: 'error',
      code: 'tooManySessions',
      message: `too many live sessions: this server runs at most ${maxSessions} at once; close another tab and reload`,
    };
    ws.send(JSON.stringify(msg), () => ws.close(1013, 'too many sessions'));
  };

  http.on('upgrade', (req: IncomingMessage, socket: Duplex, head: Buffer) => {
    socket.on('error', () => undefined);
    const path = (req.url ?? '').split('?')[0];
    if (path !== '/ws') return refuse(socket, 404, 'Not Found');
    if (!hostAllowed(req.headers.host)) return refuse(socket, 403, 'Forbidden: unknown host');
    if (!originAllowed(req)) return refuse(socket, 403, 'Forbidden: cross-origin websocket refused');
    const full = sessions.size + pendingConnections >= maxSessions;
    if (!full) pendingConnections++;
    wss.handleUpgrade(req, socket, head, (ws) => {
      if (full) refuseFull(ws);
      else wss.emit('connection', ws, req);
    });
  });

  await new Promise<void>((resolve, reject) => {
    const onError = (e: NodeJS.ErrnoException): void => {
      http.off('listening', onListening);
      if (e.code === 'EADDRINUSE')
        reject(new ListenError(`port ${port} on ${host} is already in use: stop the other server, pick another --port, or use --port 0 for any free port`));
      else if (e.code === 'EADDRNOTAVAIL' || e.code === 'ENOTFOUND')
        reject(new ListenError(`cannot listen on ${host}: no such local address`));
      else if (e.code === 'EACCES') reject(new ListenError(`not allowed to listen on ${host}:${port} (ports below 1024 need privileges)`));
      else reject(e);
    };
    const onListening = (): void => {
      http.off('error', onError);
      resolve();
    };
    http.once('error', onError);
    http.once('listening', onListening);
    http.listen(port, host);
  });
  http.on('error', (e) => log(`http error: ${e.message}`));

  const addr = http.address();
  const actualPort = typeof addr === 'object' && addr ? addr.port : port;
  const urlHost = host.includes(':') ? `[${host}]` : host === '0.0.0.0' ? '127.0.0.1' : host;
  const url = `http://${urlHost}:${actualPort}/`;

  let closing: Promise<void> | undefined;
  return {
    url,
    host,
    port: actualPort,
    http,
    sessions,
    scheduler,
    sessionThreads,
    sessionHostWorkers: () => pool?.workers() ?? [],
    connectionStats: () =>
      new Map([...stats].map(([id, st]) => [id, { bufferedBytes: st.bufferedBytes(), framesSent: st.framesSent, framesHeld: st.framesHeld, messagesSent: st.messagesSent }])),
    close(): Promise<void> {
      closing ??= new Promise<void>((resolve) => {
        for (const ws of wss.clients) ws.terminate();
        for (const s of sessions.values()) s.dispose();
        scheduler.stop();
        wss.close();
        http.closeAllConnections();
        http.close(() => void (pool ? pool.close() : Promise.resolve()).then(() => resolve()));
      });
      return closing;
    },
  };
}
