/** A live-bench server on a free port and a websocket client that records every message. */
import { WebSocket } from 'ws';
import { type RunningServer, type ServeOptions, startServer } from '../../src/server/server.ts';
import { checkServerMessage } from '../../src/server/protocol.ts';

export async function testServer(opts: ServeOptions = {}): Promise<RunningServer> {
  return startServer({ port: 0, log: () => undefined, ...opts });
}

export function wsUrl(s: RunningServer): string {
  return `${s.url.replace(/^http/, 'ws')}ws`;
}

export interface Client {
  ws: WebSocket;
  /** Every message received, parsed. */
  messages: any[];
  /** Messages that failed the server-message schema (must stay empty). */
  invalid: Array<{ message: unknown; problem: string }>;
  send(o: Record<string, unknown>): void;
  sendRaw(data: string | Buffer): void;
  waitFor(pred: (m: any) => boolean, timeoutMs?: number, what?: string): Promise<any>;
  closed: Promise<{ code: number; reason: string }>;
  close(): Promise<void>;
}

export async function connect(s: RunningServer, headers: Record<string, string> = {}): Promise<Client> {
  const ws = new WebSocket(wsUrl(s), { headers });
  const messages: any[] = [];
  const invalid: Client['invalid'] = [];
  const waiters = new Set<{ pred: (m: any) => boolean; resolve: (m: any) => void }>();
  ws.on('message', (d) => {
    const m = JSON.parse(String(d));
    const c = checkServerMessage(m);
    if (!c.ok) invalid.push({ message: m, problem: c.message });
    messages.push(m);
    for (const w of [...waiters]) if (w.pred(m)) { waiters.delete(w); w.resolve(m); }
  });
  const closed = new Promise<{ code: number; reason: string }>((resolve) => ws.on('close', (code, reason) => resolve({ code, reason: String(reason) })));
  ws.on('error', () => undefined);
  await new Promise<void>((resolve, reject) => {
    ws.once('open', () => resolve());
    ws.once('error', reject);
  });
  const client: Client = {
    ws,
    messages,
    invalid,
    closed,
    send: (o) => ws.send(JSON.stringify({ v: 1, ...o })),
    sendRaw: (d) => ws.send(d),
    waitFor(pred, timeoutMs = 20_000, what = 'a matching message') {
      const hit = messages.find(pred);
      if (hit) return Promise.resolve(hit);
      return new Promise((resolve, reject) => {
        const w = { pred, resolve: (m: any) => { clearTimeout(timer); resolve(m); } };
        const timer = setTimeout(() => {
          waiters.delete(w);
          reject(new Error(`timed out after ${timeoutMs} ms waiting for ${what}; last messages: ${messages.slice(-5).map((m) => JSON.stringify(m).slice(0, 200)).join(' | ')}`));
        }, timeoutMs);
        waiters.add(w);
      });
    },
    async close() {
      if (ws.readyState === WebSocket.OPEN || ws.readyState === WebSocket.CONNECTING) ws.close();
      await closed;
    },
  };
  return client;
}

/** Wait until the session has loaded its scenario (hello + scenario + first status-free frame). */
export async function ready(c: Client): Promise<void> {
  await c.waitFor((m) => m.type === 'scenario', 20_000, 'the scenario message');
}

/** Send a command with an id and wait for its status acknowledgement or its error. */
export async function ask(c: Client, o: Record<string, unknown>, timeoutMs = 20_000): Promise<any> {
  const id = Math.floor(Math.random() * 2 ** 30);
  c.send({ ...o, id });
  return c.waitFor((m) => (m.type === 'status' || m.type === 'error' || m.type === 'margins') && m.id === id, timeoutMs, `the answer to ${JSON.stringify(o).slice(0, 80)}`);
}

export const sleep = (ms: number): Promise<void> => new Promise((r) => setTimeout(r, ms));
