/**
 * The main thread's side of the session hosts (`sessionHost.ts`): a fixed set of worker threads,
 * each running the sessions placed on it. A new session goes to the host with the fewest. The
 * main thread keeps the sockets: it forwards commands, writes the hosts' already-serialized
 * messages to the sockets, and tells a host when each of its frames has left (with the socket's
 * queue), which is all the host needs for backpressure.
 *
 * A host that dies takes only its own sessions: each gets a `sessionFailed` error, and a fresh
 * host takes its place for new sessions.
 */
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import { type Command, type ErrorCode, PROTOCOL_VERSION, type ServerMessage } from './protocol.ts';
import { SessionError } from './session.ts';
import type { FromHost, HostConfig, ToHost } from './sessionHost.ts';

/** What a connection needs of a live session, in-process (`Session`) or on a host (`RemoteSession`). */
export interface LiveSession {
  readonly id: string;
  init(): Promise<void>;
  handle(cmd: Command): Promise<void>;
  error(code: ErrorCode, message: string, extra?: { problems?: Array<{ path: string; message: string }>; ref?: string; id?: number }): void;
  dispose(): void;
  replay(): Download | Promise<Download>;
  traceCsv(): Download | Promise<Download>;
}

export interface Download {
  text: string;
  fileName: string;
}

/** A connection's socket as a session sees it. */
export interface SessionTransport {
  send(msg: ServerMessage): void;
  /** A message serialized by a host; `frameLeft` runs once a frame has been handed to the socket. */
  sendText(text: string, isFrame: boolean, frameLeft?: (bufferedBytes: number) => void): void;
  /** A host held a frame back (the socket was busy). */
  frameHeld(): void;
  runningChanged(running: boolean): void;
}

/** A request without its number (Omit over a union would merge the members). */
type ToHostRequest = Extract<ToHost, { req: number }> extends infer R ? (R extends { req: number } ? Omit<R, 'req'> : never) : never;

const FROM_TS = import.meta.url.endsWith('.ts');
const HOST_FILE = FROM_TS ? './sessionHostBoot.mjs' : './sessionHost.js';

class Host {
  readonly worker: Worker;
  readonly sessions = new Map<string, SessionTransport>();
  private readonly pending = new Map<number, { resolve: (v: unknown) => void; reject: (e: Error) => void }>();
  private nextReq = 1;
  dead = false;
  /** Set before a deliberate stop: the sessions are closing with their sockets anyway. */
  stopping = false;
  readonly ready: Promise<void>;
  private markReady: () => void = () => undefined;

  constructor(cfg: HostConfig, log: (line: string) => void, onDeath: (h: Host, why: string) => void) {
    this.worker = new Worker(fileURLToPath(new URL(HOST_FILE, import.meta.url)), {
      workerData: { lossdialSessionHost: cfg },
      // The boot module registers the TypeScript loader itself; nothing inherited is needed.
      execArgv: [],
    });
    this.ready = new Promise<void>((resolve, reject) => {
      this.markReady = resolve;
      this.worker.once('error', reject);
    });
    this.ready.catch(() => undefined);
    this.worker.on('message', (m: FromHost) => this.receive(m, log));
    this.worker.on('error', (e) => {
      log(`session host failed: ${e.stack ?? e.message}`);
      this.die(`the session host failed: ${e.message}`, onDeath);
    });
    this.worker.on('exit', (code) => this.die(`the session host stopped (exit code ${code})`, onDeath));
  }

  private receive(m: FromHost, log: (line: string) => void): void {
    switch (m.t) {
      case 'ready':
        this.markReady();
        return;
      case 'msg': {
        const tr = this.sessions.get(m.id);
        const id = m.id;
        tr?.sendText(m.text, m.frame, m.frame ? (bufferedBytes) => this.post({ t: 'sent', id, bufferedBytes }) : undefined);
        return;
      }
      case 'held':
        this.sessions.get(m.id)?.frameHeld();
        return;
      case 'running':
        this.sessions.get(m.id)?.runningChanged(m.running);
        return;
      case 'log':
        log(m.line);
        return;
      case 'done': {
        const p = this.pending.get(m.req);
        this.pending.delete(m.req);
        if (!p) return;
        if (m.ok) p.resolve(m.value);
        else p.reject(new SessionError(m.code as ErrorCode, m.message));
      }
    }
  }

  private die(why: string, onDeath: (h: Host, why: string) => void): void {
    if (this.dead) return;
    this.dead = true;
    for (const p of this.pending.values()) p.reject(new SessionError('sessionFailed', why));
    this.pending.clear();
    if (this.stopping) return;
    for (const tr of this.sessions.values()) {
      tr.send({ v: PROTOCOL_VERSION, type: 'error', code: 'sessionFailed', message: `${why}; reload the page for a new session` });
      tr.runningChanged(false);
    }
    onDeath(this, why);
  }

  post(m: ToHost): void {
    if (!this.dead) this.worker.postMessage(m);
  }

  request(m: ToHostRequest): Promise<unknown> {
    if (this.dead) return Promise.reject(new SessionError('sessionFailed', 'the session host has stopped; reload the page for a new session'));
    const req = this.nextReq++;
    return new Promise((resolve, reject) => {
      this.pending.set(req, { resolve, reject });
      this.worker.postMessage({ ...m, req } as ToHost);
    });
  }
}

/** A session computed on a host: the same surface as an in-process `Session`. */
class RemoteSession implements LiveSession {
  constructor(
    readonly id: string,
    private readonly host: Host,
  ) {}

  async init(): Promise<void> {
    await this.host.request({ t: 'open', id: this.id });
  }

  async handle(cmd: Command): Promise<void> {
    try {
      await this.host.request({ t: 'cmd', id: this.id, cmd });
    } catch (e) {
      // The host is gone (the session already got its sessionFailed error): answer the command.
      if (!(e instanceof SessionError)) throw e;
      this.host.sessions.get(this.id)?.send({ v: PROTOCOL_VERSION, type: 'error', code: e.code, message: e.message, ref: cmd.type, ...(cmd.id !== undefined ? { id: cmd.id } : {}) });
    }
  }

  error(code: ErrorCode, message: string, extra: Parameters<LiveSession['error']>[2] = {}): void {
    this.host.post({ t: 'error', id: this.id, code, message, extra });
  }

  dispose(): void {
    this.host.post({ t: 'close', id: this.id });
    this.host.sessions.delete(this.id);
  }

  replay(): Promise<Download> {
    return this.host.request({ t: 'call', id: this.id, what: 'replay' }) as Promise<Download>;
  }

  traceCsv(): Promise<Download> {
    return this.host.request({ t: 'call', id: this.id, what: 'trace' }) as Promise<Download>;
  }
}

export class SessionPool {
  private readonly hosts: Host[] = [];
  private closed = false;

  constructor(
    private readonly size: number,
    private readonly cfg: HostConfig,
    private readonly log: (line: string) => void,
  ) {
    for (let i = 0; i < size; i++) this.hosts.push(this.spawn());
  }

  private spawn(): Host {
    return new Host(this.cfg, this.log, (dead) => {
      if (this.closed) return;
      const i = this.hosts.indexOf(dead);
      if (i >= 0) this.hosts[i] = this.spawn();
    });
  }

  /** Every host has started (its first session then needs no start-up wait). */
  async ready(): Promise<void> {
    await Promise.all(this.hosts.map((h) => h.ready));
  }

  get threads(): number {
    return this.size;
  }

  /** The host threads, in placement order (tests stop one to check that its failure stays contained). */
  workers(): readonly Worker[] {
    return this.hosts.map((h) => h.worker);
  }

  /** A session on the least busy host. */
  open(id: string, transport: SessionTransport): LiveSession {
    const host = this.hosts.reduce((best, h) => (h.sessions.size < best.sessions.size ? h : best));
    host.sessions.set(id, transport);
    return new RemoteSession(id, host);
  }

  async close(): Promise<void> {
    this.closed = true;
    for (const h of this.hosts) h.stopping = true;
    await Promise.all(this.hosts.map((h) => h.worker.terminate()));
  }
}
