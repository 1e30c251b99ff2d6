/**
 * The live session over a real websocket: every command is acknowledged (or refused with a
 * reason) and the session keeps running; every server message matches the protocol schemas.
 */
import { readFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RunningServer } from '../../src/server/server.ts';
import { type Client, ask, connect, ready, sleep, testServer } from './helpers.ts';

// The same session, computed on the main thread (0) and on a session host worker thread (1).
describe.each([0, 1])('a live session (session threads: %i)', (sessionThreads) => {
  let server: RunningServer;
  let c: Client;

  beforeAll(async () => {
    server = await testServer({ sessionThreads });
    c = await connect(server);
    await ready(c);
  });

  afterAll(async () => {
    await c?.close();
    await server?.close();
  });

  it('greets with hello (cases, limits, hardware notice) and the default scenario', () => {
    const hello = c.messages.find((m) => m.type === 'hello');
    expect(hello.cases).toContain('buck-cabin-warmup');
    expect(hello.limits.maxMessageBytes).toBeGreaterThan(0);
    expect(hello.hardwareNotice).toMatch(/validate on hardware/);
    const sc = c.messages.find((m) => m.type === 'scenario');
    expect(sc.name).toBe('buck-cabin-warmup');
    expect(sc.supervisorAvailable).toBe(true);
    expect(sc.load.kind).toBe('rOhm');
  });

  it('speed and start run the simulation at the chosen pace, streaming frames', async () => {
    expect((await ask(c, { type: 'speed', speed: 200 })).ack).toBe('speed');
    const st = await ask(c, { type: 'start' });
    expect(st.ack).toBe('start');
    expect(st.state).toBe('running');
    const f = await c.waitFor((m) => m.type === 'frame' && m.state === 'running' && m.tS > 20, 20_000, 'frames past 20 s');
    expect(f.records.tS.length).toBeGreaterThan(0);
    expect(f.live.fswHz).toBeGreaterThan(0);
  });

  it('setDemand moves the demand the supervisor tracks', async () => {
    const st = await ask(c, { type: 'setDemand', heatDemandW: 25 });
    expect(st.ack).toBe('setDemand');
    const f = await c.waitFor((m) => m.type === 'frame' && m.live.demandW === 25, 10_000, 'a frame with the new demand');
    expect(f.live.demandW).toBe(25);
  });

  it('loadStep changes the load (the resistive kind this case has) and refuses the other kind', async () => {
    expect((await ask(c, { type: 'loadStep', loadROhm: 0.6 })).ack).toBe('loadStep');
    await c.waitFor((m) => m.type === 'frame' && m.live.loadROhm === 0.6, 10_000, 'the new load');
    const e = await ask(c, { type: 'loadStep', loadIA: 5 });
    expect(e.type).toBe('error');
    expect(e.message).toMatch(/resistive load/);
  });

  it('setInlet sets the coolant inlet temperature', async () => {
    expect((await ask(c, { type: 'setInlet', inletC: 12 })).ack).toBe('setInlet');
    await c.waitFor((m) => m.type === 'frame' && m.live.inletC === 12, 10_000, 'the new inlet');
  });

  it('manual knobs are refused while the supervisor drives them, accepted once it is off', async () => {
    const refused = await ask(c, { type: 'manual', fswHz: 150e3 });
    expect(refused.type).toBe('error');
    expect(refused.code).toBe('notAllowed');
    const off = await ask(c, { type: 'supervisor', on: false });
    expect(off.ack).toBe('supervisor');
    const ok = await ask(c, { type: 'manual', fswHz: 150e3, deadTimeS: 60e-9, vDriveV: 9 });
    expect(ok.ack).toBe('manual');
    const f = await c.waitFor((m) => m.type === 'frame' && m.live.fswHz === 150e3 && m.live.supervisorOn === 0, 10_000, 'the manual knobs');
    expect(f.live.deadTimeS).toBe(60e-9);
    expect(f.live.vDriveV).toBe(9);
    const bad = await ask(c, { type: 'manual', deadTimeS: 1.9e-6 });
    expect(bad.code).toBe('badCommand');
    expect(bad.message).toMatch(/25 %/);
    expect((await ask(c, { type: 'supervisor', on: true })).ack).toBe('supervisor');
  });

  it('gains change the PI gains', async () => {
    expect((await ask(c, { type: 'gains', kp: 0.003, ki: 70 })).ack).toBe('gains');
    await c.waitFor((m) => m.type === 'frame' && m.live.kp === 0.003 && m.live.ki === 70, 10_000, 'the new gains');
  });

  it('margins answers with the loop margins at the present point, then the margin map', async () => {
    const id = 424242;
    c.send({ type: 'margins', id });
    const point = await c.waitFor((m) => m.type === 'margins' && m.id === id && m.result.kind === 'point', 20_000, 'point margins');
    expect(point.result.bode.freqHz.length).toBeGreaterThan(50);
    const map = await c.waitFor((m) => m.type === 'margins' && m.id === id && m.result.kind === 'map', 30_000, 'the margin map');
    expect(map.result.pmDeg.length).toBe(map.result.y.values.length);
    expect(map.result.pmDeg[0].length).toBe(map.result.x.values.length);
    expect(map.result.current.x).toBeGreaterThan(0);
  });

  it('pause stops simulated time; start resumes it', async () => {
    const p = await ask(c, { type: 'pause' });
    expect(p.state).toBe('paused');
    const t0 = p.tS;
    await sleep(300);
    const again = await ask(c, { type: 'speed', speed: 200 });
    expect(again.tS).toBe(t0);
    expect((await ask(c, { type: 'start' })).state).toBe('running');
    await c.waitFor((m) => m.type === 'frame' && m.tS > t0, 10_000, 'time moving again');
  });

  it('the session downloads as a replay scenario and a trace CSV', async () => {
    await ask(c, { type: 'pause' });
    const id = server.sessions.keys().next().value as string;
    const rep = await fetch(`${server.url}api/sessions/${id}/replay.yaml`);
    expect(rep.status).toBe(200);
    expect(rep.headers.get('content-disposition')).toMatch(/attachment; filename="buck-cabin-warmup-session.yaml"/);
    const text = await rep.text();
    expect(text).toMatch(/heatDemandW: \{ step: \[/);
    expect(text).toMatch(/durationS: \d/);
    const csv = await fetch(`${server.url}api/sessions/${id}/trace.csv`);
    expect(csv.status).toBe(200);
    const lines = (await csv.text()).trim().split('\n');
    expect(lines[0].startsWith('tS,demandW,heatToCoolantW')).toBe(true);
    expect(lines.length).toBeGreaterThan(10);
    expect((await fetch(`${server.url}api/sessions/nope/trace.csv`)).status).toBe(404);
  });

  it('reset goes back to t = 0 with the same scenario', async () => {
    const r = await ask(c, { type: 'reset' });
    expect(r.ack).toBe('reset');
    expect(r.tS).toBe(0);
    expect(r.state).toBe('idle');
    expect(r.records).toBe(0);
  });

  it('loadScenario by case name, by text, and refusals with field paths', async () => {
    const byName = await ask(c, { type: 'loadScenario', name: 'buck-aux-48v' });
    expect(byName.ack).toBe('loadScenario');
    expect(c.messages.filter((m) => m.type === 'scenario').at(-1).name).toBe('buck-aux-48v');

    const unknown = await ask(c, { type: 'loadScenario', name: 'no-such-case' });
    expect(unknown.code).toBe('unknownCase');
    const traversal = await ask(c, { type: 'loadScenario', name: '../package' });
    expect(traversal.code).toBe('badCommand');

    const text = readFileSync(new URL('../../cases/buck-cabin-warmup.yaml', import.meta.url), 'utf8');
    const byText = await ask(c, { type: 'loadScenario', text: text.replace('name: buck-cabin-warmup', 'name: my-edit') });
    expect(byText.ack).toBe('loadScenario');
    const sc = c.messages.filter((m) => m.type === 'scenario').at(-1);
    expect(sc.name).toBe('my-edit');
    expect(sc.source).toBe('text');

    const bad = await ask(c, { type: 'loadScenario', text: text.replace('fswHz: 100000', 'fswHz: -5').replace('rOhm: 0.48', 'rOhm: banana') });
    expect(bad.code).toBe('badScenario');
    const paths = bad.problems.map((p: { path: string }) => p.path);
    expect(paths).toContain('pwm.fswHz');
    expect(paths).toContain('buck.load');
    // The refused text left the session on its previous scenario.
    expect(c.messages.filter((m) => m.type === 'scenario').at(-1).name).toBe('my-edit');
  });

  it('every message the server sent matched the protocol schemas', () => {
    expect(c.invalid).toEqual([]);
  });
});
