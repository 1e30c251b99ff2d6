/**
 * What a hostile or broken client can do to the server: malformed and oversized messages, a
 * foreign Origin or Host, too many sessions, a command flood, a client that stops reading, and a
 * thousand generated hostile messages. The server must answer each with an error where one is
 * due, keep the session up, bound its memory, and stay alive for everyone else.
 */
import { request } from 'node:http';
import fc from 'fast-check';
import { WebSocket } from 'ws';
import { afterEach, describe, expect, it } from 'vitest';
import { COMMAND_TYPES } from '../../src/server/protocol.ts';
import type { RunningServer } from '../../src/server/server.ts';
import { type Client, ask, connect, ready, sleep, testServer, wsUrl } from './helpers.ts';

const servers: RunningServer[] = [];
const clients: Client[] = [];

async function server(opts: Parameters<typeof testServer>[0] = {}): Promise<RunningServer> {
  const s = await testServer(opts);
  servers.push(s);
  return s;
}
async function client(s: RunningServer, headers?: Record<string, string>): Promise<Client> {
  const c = await connect(s, headers);
  clients.push(c);
  return c;
}

afterEach(async () => {
  for (const c of clients.splice(0)) c.ws.terminate();
  for (const s of servers.splice(0)) await s.close();
});

/** The upgrade response status for a handshake with these headers (or 101 when accepted). */
function upgradeStatus(s: RunningServer, headers: Record<string, string>, path = '/ws'): Promise<number> {
  return new Promise((resolve, reject) => {
    const ws = new WebSocket(`${wsUrl(s).replace(/\/ws$/, path)}`, { headers });
    ws.on('unexpected-response', (_req, res) => {
      resolve(res.statusCode ?? 0);
      ws.terminate();
    });
    ws.on('open', () => {
      resolve(101);
      ws.terminate();
    });
    ws.on('error', (e) => {
      if (!/Unexpected server response/.test(e.message)) reject(e);
    });
  });
}

describe('malformed messages', () => {
  it('invalid JSON, unknown commands, bad fields, wrong version, binary: each an error, the session stays up', async () => {
    const s = await server();
    const c = await client(s);
    await ready(c);
    const cases: Array<[string | Buffer, string]> = [
      ['{not json', 'badJson'],
      ['[1,2,3]', 'badEnvelope'],
      ['"start"', 'badEnvelope'],
      ['null', 'badEnvelope'],
      [JSON.stringify({ type: 'start' }), 'badVersion'],
      [JSON.stringify({ v: 2, type: 'start' }), 'badVersion'],
      [JSON.stringify({ v: 1 }), 'badEnvelope'],
      [JSON.stringify({ v: 1, type: 'selfDestruct' }), 'unknownCommand'],
      [JSON.stringify({ v: 1, type: '__proto__' }), 'unknownCommand'],
      [JSON.stringify({ v: 1, type: 'setDemand', heatDemandW: 'lots' }), 'badCommand'],
      [JSON.stringify({ v: 1, type: 'setDemand', heatDemandW: -5 }), 'badCommand'],
      [JSON.stringify({ v: 1, type: 'setDemand', heatDemandW: 5, extra: 1 }), 'badCommand'],
      [JSON.stringify({ v: 1, type: 'speed', speed: 1e12 }), 'badCommand'],
      [JSON.stringify({ v: 1, type: 'manual' }), 'badCommand'],
      [JSON.stringify({ v: 1, type: 'loadScenario', name: '/etc/passwd' }), 'badCommand'],
      [Buffer.from([1, 2, 3]), 'badEnvelope'],
    ];
    for (const [data, code] of cases) {
      const before = c.messages.length;
      c.sendRaw(data);
      const e = await c.waitFor((m) => m.type === 'error' && c.messages.indexOf(m) >= before, 5000, `an error for ${String(data).slice(0, 40)}`);
      expect(e.code, String(data)).toBe(code);
    }
    const bad = c.messages.filter((m) => m.type === 'error' && m.code === 'badCommand' && m.ref === 'setDemand');
    expect(bad[0].problems[0].path).toBe('heatDemandW');
    // Still up and answering.
    expect((await ask(c, { type: 'speed', speed: 10 })).ack).toBe('speed');
    expect(c.invalid).toEqual([]);
  });

  it('an oversized message gets an error and the session stays up; past the hard cap the socket closes (1009)', async () => {
    const s = await server({ limits: { maxMessageBytes: 4096 }, maxPayloadBytes: 64 * 1024 });
    const c = await client(s);
    await ready(c);
    c.send({ type: 'loadScenario', text: 'x'.repeat(10_000) });
    const e = await c.waitFor((m) => m.type === 'error' && m.code === 'tooLarge', 5000, 'tooLarge');
    expect(e.message).toMatch(/4096-byte limit/);
    expect((await ask(c, { type: 'speed', speed: 5 })).ack).toBe('speed');
    c.sendRaw('y'.repeat(100 * 1024));
    const closed = await c.closed;
    expect(closed.code).toBe(1009);
    // The server itself is fine.
    const c2 = await client(s);
    await ready(c2);
  });
});

describe('who may connect', () => {
  it('refuses a websocket upgrade with a foreign Origin (403), accepts same-origin and no Origin', async () => {
    const s = await server();
    const host = new URL(s.url).host;
    expect(await upgradeStatus(s, { Origin: 'http://evil.example' })).toBe(403);
    expect(await upgradeStatus(s, { Origin: `http://${host}.evil.example` })).toBe(403);
    expect(await upgradeStatus(s, { Origin: 'null' })).toBe(403);
    expect(await upgradeStatus(s, { Origin: `http://${host}` })).toBe(101);
    expect(await upgradeStatus(s, {})).toBe(101);
    expect(await upgradeStatus(s, {}, '/elsewhere')).toBe(404);
  });

  it('refuses a foreign Host (DNS rebinding) on the websocket and on HTTP', async () => {
    const s = await server();
    const port = new URL(s.url).port;
    expect(await upgradeStatus(s, { Host: `evil.example:${port}`, Origin: `http://evil.example:${port}` })).toBe(403);
    const status = await new Promise<number>((resolve, reject) => {
      const req = request({ host: '127.0.0.1', port, path: '/', headers: { Host: `evil.example:${port}` } }, (res) => {
        res.resume();
        resolve(res.statusCode ?? 0);
      });
      req.on('error', reject);
      req.end();
    });
    expect(status).toBe(421);
  });

  it('past the session limit a new connection is told why and closed with 1013; others carry on', async () => {
    const s = await server({ maxSessions: 2 });
    const a = await client(s);
    const b = await client(s);
    await ready(a);
    await ready(b);
    const third = await client(s);
    const e = await third.waitFor((m) => m.type === 'error', 5000, 'the refusal');
    expect(e.code).toBe('tooManySessions');
    expect(e.message).toMatch(/at most 2/);
    expect((await third.closed).code).toBe(1013);
    expect((await ask(a, { type: 'speed', speed: 3 })).ack).toBe('speed');
    await b.close();
    await sleep(100);
    const d = await client(s);
    await ready(d);
  });
});

describe('floods and slow readers', () => {
  it('rate-limits commands per connection with an error for each refused one', async () => {
    const s = await server({ limits: { commandsPerSecond: 5, commandBurst: 5 } });
    const c = await client(s);
    await ready(c);
    for (let i = 0; i < 30; i++) c.send({ type: 'speed', speed: 10 });
    await c.waitFor((m) => m.type === 'error' && m.code === 'rateLimited', 5000, 'rateLimited');
    await sleep(300);
    const acks = c.messages.filter((m) => m.type === 'status' && m.ack === 'speed').length;
    const limited = c.messages.filter((m) => m.type === 'error' && m.code === 'rateLimited').length;
    expect(acks).toBeLessThanOrEqual(7);
    expect(acks + limited).toBe(30);
    await sleep(1200);
    expect((await ask(c, { type: 'speed', speed: 20 })).ack).toBe('speed');
  });

  it.each([0, 1])('a client that stops reading costs bounded memory: frames are held and merged, never queued without end (session threads: %i)', async (sessionThreads) => {
    // Large frames at a high rate so the socket's buffers fill within a second or two.
    const s = await server({ frameHz: 50, maxPointsPerFrame: 3000, defaultCase: 'buck-aux-48v', sessionThreads });
    const c = await client(s);
    await ready(c);
    expect((await ask(c, { type: 'speed', speed: 'max' })).ack).toBe('speed');
    expect((await ask(c, { type: 'start' })).ack).toBe('start');
    await c.waitFor((m) => m.type === 'frame' && m.records.tS.length > 10, 10_000, 'frames with records');
    const sock = (c.ws as unknown as { _socket: import('node:net').Socket })._socket;
    sock.pause();
    const id = s.sessions.keys().next().value as string;
    let maxQueued = 0;
    let held = 0;
    for (let i = 0; i < 40; i++) {
      await sleep(100);
      const st = s.connectionStats().get(id)!;
      maxQueued = Math.max(maxQueued, st.bufferedBytes);
      held = st.framesHeld;
    }
    console.log(`slow reader: max queued ${maxQueued} B, frames held ${held}`);
    // Backpressure engaged, and what is queued in the server stays near the high-water mark
    // (256 KiB) plus at most two frames in flight.
    expect(held).toBeGreaterThan(10);
    expect(maxQueued).toBeLessThan(256 * 1024 + 2 * 1024 * 1024);
    sock.resume();
    const f = await c.waitFor((m) => m.type === 'frame' && m.merged > 0, 20_000, 'a merged frame after resuming');
    expect(f.droppedRecords).toBeGreaterThan(0);
    expect(f.records.tS.length).toBeLessThanOrEqual(3000);
    expect((await ask(c, { type: 'pause' })).state).toBe('paused');
  });
});

describe('failures stay in their session', () => {
  it('a session whose simulation throws fails alone: an error for it, the others and the server carry on', async () => {
    const s = await server();
    const a = await client(s);
    const b = await client(s);
    await ready(a);
    await ready(b);
    const [idA] = [...s.sessions.keys()];
    const sessionA = s.sessions.get(idA) as unknown as { run: { sim: { advanceUntil: () => never } } };
    sessionA.run.sim.advanceUntil = () => {
      throw new Error('injected fault');
    };
    await ask(a, { type: 'speed', speed: 50 });
    await ask(b, { type: 'speed', speed: 50 });
    a.send({ type: 'start' });
    b.send({ type: 'start' });
    const e = await a.waitFor((m) => m.type === 'error' && m.code === 'sessionFailed', 10_000, 'sessionFailed');
    expect(e.message).toMatch(/injected fault/);
    const t0 = (await b.waitFor((m) => m.type === 'frame' && m.state === 'running', 10_000, 'b running')).tS;
    await b.waitFor((m) => m.type === 'frame' && m.tS > t0 + 5, 10_000, 'b still advancing');
    // The failed session still answers, and a reset brings it back.
    expect((await ask(a, { type: 'reset' })).state).toBe('idle');
    expect((await fetch(`${s.url}api/health`)).status).toBe(200);
  });

  it('a session host thread that dies fails only its own sessions; new sessions start on its replacement', async () => {
    const s = await server({ sessionThreads: 2 });
    const a = await client(s);
    const b = await client(s);
    await ready(a);
    await ready(b);
    for (const c of [a, b]) {
      await ask(c, { type: 'speed', speed: 50 });
      await ask(c, { type: 'start' });
    }
    // Placement: the first session went to the first host, the second to the other one.
    await s.sessionHostWorkers()[0].terminate();
    const e = await a.waitFor((m) => m.type === 'error' && m.code === 'sessionFailed', 10_000, 'sessionFailed on a');
    expect(e.message).toMatch(/session host stopped/);
    // A command to the lost session is answered with an error, not left hanging.
    const late = await ask(a, { type: 'pause' });
    expect(late.type).toBe('error');
    expect(late.code).toBe('sessionFailed');
    const t0 = (await b.waitFor((m) => m.type === 'frame' && m.state === 'running', 10_000, 'b running')).tS;
    await b.waitFor((m) => m.type === 'frame' && m.tS > t0 + 5, 10_000, 'b still advancing');
    expect(b.messages.some((m) => m.type === 'error')).toBe(false);
    // A new session starts (on the replacement host) and runs.
    const c = await client(s);
    await ready(c);
    await ask(c, { type: 'speed', speed: 50 });
    expect((await ask(c, { type: 'start' })).state).toBe('running');
    await c.waitFor((m) => m.type === 'frame' && m.tS > 1, 10_000, 'the new session advancing');
    expect((await fetch(`${s.url}api/health`)).status).toBe(200);
  });

  it('a client that stops answering pings is cut off, and its session and timers go with it', async () => {
    const s = await server({ limits: { heartbeatMs: 150 } });
    const ws = new WebSocket(wsUrl(s), { autoPong: false });
    ws.on('error', () => undefined);
    const closed = new Promise<number>((r) => ws.on('close', (code) => r(code)));
    await new Promise<void>((r) => ws.on('open', () => r()));
    await sleep(100);
    expect(s.sessions.size).toBe(1);
    expect(await closed).toBe(1006);
    await sleep(50);
    expect(s.sessions.size).toBe(0);
    expect(s.connectionStats().size).toBe(0);
  });
});

describe('generated hostile messages', () => {
  it('1,000 fast-check messages: errors where due, no crash, the server still answers', async () => {
    const s = await server({ limits: { commandsPerSecond: 1e6, commandBurst: 1e6, maxQueuedCommands: 2000 } });
    const c = await client(s);
    await ready(c);
    const other = await client(s);
    await ready(other);
    const anyValue = fc.oneof(
      fc.double(), fc.integer(), fc.string({ maxLength: 40 }), fc.boolean(), fc.constant(null),
      fc.constant(Number.MAX_VALUE), fc.constant(-0), fc.constant('Infinity'), fc.constant('../../package.json'),
      fc.array(fc.integer(), { maxLength: 5 }), fc.dictionary(fc.string({ maxLength: 8 }), fc.integer(), { maxKeys: 4 }),
    );
    const fields = ['heatDemandW', 'loadROhm', 'loadIA', 'inletC', 'on', 'fswHz', 'deadTimeS', 'vDriveV', 'kp', 'ki', 'speed', 'name', 'text', 'map', 'id', '__proto__', 'constructor'];
    // Mostly command-shaped messages with wrong or extreme fields (margins rarely: it is costly), plus raw junk.
    const typed = fc.record({
      v: fc.oneof(fc.constant(1), fc.constant(1), fc.constant(1), anyValue),
      type: fc.oneof(fc.constantFrom(...COMMAND_TYPES.filter((t) => t !== 'margins')), fc.constantFrom(...COMMAND_TYPES.filter((t) => t !== 'margins')), anyValue),
      extra: fc.dictionary(fc.constantFrom(...fields), anyValue, { maxKeys: 3 }),
    }).map(({ v, type, extra }) => JSON.stringify({ v, type, ...extra }));
    const raw = fc.oneof(fc.string({ maxLength: 200 }), fc.json(), fc.jsonValue().map((x) => JSON.stringify(x)), fc.uint8Array({ maxLength: 64 }).map((a) => Buffer.from(a).toString('latin1')));
    const messages = fc.sample(fc.oneof({ weight: 3, arbitrary: typed }, { weight: 1, arbitrary: raw }), { numRuns: 1000, seed: 20261201 });
    expect(messages.length).toBe(1000);
    for (const m of messages) c.sendRaw(m);
    // Still answering, on this connection and on the other one.
    const pong = await ask(c, { type: 'pause' }, 60_000);
    expect(pong.type).toBe('status');
    expect((await ask(other, { type: 'speed', speed: 7 })).ack).toBe('speed');
    const health = await fetch(`${s.url}api/health`);
    expect(health.status).toBe(200);
    expect(c.invalid).toEqual([]);
    expect(c.messages.some((m) => m.type === 'error')).toBe(true);
    expect(c.messages.filter((m) => m.type === 'error' && m.code === 'sessionFailed')).toEqual([]);
  });
});
