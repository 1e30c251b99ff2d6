/**
 * One live session: a scenario, its resumable simulation, the pacing that keeps simulated time at
 * the chosen multiple of wall time, the session trace, and the frames sent to one client.
 *
 * Each tick (frameHz times a second) advances the simulation in chunks until the target time or
 * the tick's compute budget is reached (a session that cannot keep up runs slower rather than
 * piling up debt), then sends one frame if the transport can take it — otherwise the records wait,
 * decimated, for the next frame. Live commands are applied between engine iterations as step
 * breakpoints, so the session replays exactly from its replay scenario.
 *
 * Everything a command or a tick does is wrapped: an exception fails this session (state
 * `failed`, an error message) and nothing else.
 */
import { ScenarioError } from '../scenario/errors.ts';
import type { Scenario } from '../scenario/parse.ts';
import type { SimRecord } from '../sim/engine.ts';
import type { CaseLibrary } from './cases.ts';
import { FrameBuffer } from './frameBuffer.ts';
import { parseScenarioShared } from './scenarioCache.ts';
import { type LiveCaution, liveCautions } from './liveCautions.ts';
import { type LiveRun, baseValuesAt0, createLiveRun, liveStepsOf } from './liveRun.ts';
import {
  type Command,
  type CommandOf,
  type ErrorCode,
  FRAME_COLUMNS,
  LIVE_BOUNDS,
  PROTOCOL_VERSION,
  type Problem,
  type ScenarioMessage,
  type ServerMessage,
  type SessionState,
} from './protocol.ts';
import { replayScenario } from './replay.ts';
import { traceCsvText } from './traceCsv.ts';
import { type LivePoint, type MapSpec, jsonSafe, mapRow, mapSpecFor, pointMargin, stabilityAt } from './stability.ts';

export interface SessionSink {
  /** Send a message; droppable ones (frames) may be refused by the transport. */
  send(msg: ServerMessage): void;
  /** The transport has room for a frame now. */
  canSendFrame(): boolean;
}

export interface SessionOptions {
  cases: CaseLibrary;
  defaultCase: string;
  frameHz: number;
  maxPointsPerFrame: number;
  traceMaxRecords: number;
  /** Compute budget of one tick (ms), given the number of running sessions. */
  budgetMs(): number;
  now(): number;
  /** Register with the server's tick scheduler; returns the unregister function. Without it, call tick() yourself. */
  schedule?(s: Session): () => void;
  onRunningChange?(running: boolean): void;
  log?(line: string): void;
}

export class SessionError extends Error {
  constructor(
    readonly code: ErrorCode,
    message: string,
    readonly problems?: Problem[],
  ) {
    super(message);
    this.name = 'SessionError';
  }
}

const LIVE_EVERY_MS = 250;
/** Longest simulated stretch between checks of the trace limit. */
const MAX_CHUNK_S = 5;
/** Most wall time a session behind its pace may catch up (s), at whatever speed the thread has to spare. */
const CATCH_UP_WALL_S = 2;
const MARGIN_EVERY_MS = 500;
const PAUSED_FRAME_MS = 1000;

interface MapJob {
  spec: MapSpec;
  point: LivePoint;
  row: number;
  pmDeg: number[][];
  gmDb: number[][];
  id: number | undefined;
}

export class Session {
  state: SessionState = 'idle';
  speed: number | 'max' = 10;
  private scenario!: Scenario;
  private sourceText = '';
  private source: 'case' | 'text' = 'case';
  private run!: LiveRun;
  private trace: SimRecord[] = [];
  private frames: FrameBuffer;
  private unschedule: (() => void) | undefined;
  private lastTickMs = 0;
  private simTargetS = 0;
  private achievedSpeed = 0;
  /** Simulated time at the start of the last round's first slice (s). */
  private roundStartS = 0;
  private seq = 0;
  private merged = 0;
  private dirty = true;
  private lastFrameMs = -Infinity;
  private cautions: LiveCaution[] = [];
  private cautionsAtMs = -Infinity;
  private margin: { tS: number; pmDeg: number | null; gmDb: number | null; crossoverHz: number | null } | null = null;
  private marginAtMs = -Infinity;
  private marginKey = '';
  private mapJob: MapJob | undefined;
  private lastRecord: SimRecord | undefined;
  private disposed = false;

  constructor(
    readonly id: string,
    private readonly sink: SessionSink,
    private readonly opts: SessionOptions,
  ) {
    this.frames = new FrameBuffer(FRAME_COLUMNS, opts.maxPointsPerFrame);
  }

  get tS(): number {
    return this.run?.sim.t ?? 0;
  }

  get recordCount(): number {
    return this.trace.length;
  }

  get scenarioName(): string {
    return this.scenario?.name ?? '';
  }

  /** Load the default case and join the scheduler. */
  async init(): Promise<void> {
    const text = await this.opts.cases.read(this.opts.defaultCase);
    if (text === undefined) throw new SessionError('unknownCase', `default case ${JSON.stringify(this.opts.defaultCase)} not found`);
    if (this.disposed) return;
    this.install(parseScenarioShared(text), text, 'case');
    this.unschedule = this.opts.schedule?.(this);
  }

  dispose(): void {
    this.disposed = true;
    this.unschedule?.();
    this.unschedule = undefined;
    this.setState(this.state === 'running' ? 'paused' : this.state);
    this.trace = [];
    this.frames.clear();
    this.mapJob = undefined;
  }

  // ------------------------------------------------------------------ scenario

  private install(scenario: Scenario, text: string, source: 'case' | 'text'): void {
    // Build first: a scenario the simulator refuses leaves the old one in place.
    const run = createLiveRun(scenario, (r) => this.onRecord(r));
    this.scenario = scenario;
    this.sourceText = text;
    this.source = source;
    this.run = run;
    this.trace = [];
    this.frames.clear();
    this.lastRecord = undefined;
    this.simTargetS = 0;
    this.achievedSpeed = 0;
    this.roundStartS = 0;
    this.margin = null;
    this.marginKey = '';
    this.mapJob = undefined;
    this.cautionsAtMs = -Infinity;
    this.marginAtMs = -Infinity;
    this.setState('idle');
    this.sink.send(this.scenarioMessage());
    this.dirty = true;
  }

  private onRecord(r: SimRecord): void {
    this.trace.push(r);
    this.frames.push(r);
    this.lastRecord = r;
  }

  private loadKind(): 'rOhm' | 'iA' {
    return this.run.sys.loadIsCurrent ? 'iA' : 'rOhm';
  }

  private scenarioMessage(): ScenarioMessage {
    const sc = this.scenario;
    const prof = this.run.sim.profiles;
    const sup = sc.supervisor;
    const loadKind = this.loadKind();
    const fswRange: [number, number] = sup ? [sup.fsw.minHz, sup.fsw.maxHz] : [sc.pwm.fswHz / 4, Math.min(sc.pwm.fswHz * 4, LIVE_BOUNDS.fswHzMax)];
    const dtRange: [number, number] = sup ? [sup.deadTime.minS, sup.deadTime.maxS] : [0, Math.max(4 * sc.pwm.deadTimeS, 200e-9)];
    const vgRange: [number, number] = sup?.gateDrive.enabled ? [sup.gateDrive.minV, sup.gateDrive.maxV] : [Math.max(LIVE_BOUNDS.vDriveVMin, sc.gateDrive.vDriveV * 0.4), sc.gateDrive.vDriveV * 1.5];
    const plant = this.run.sys.plant;
    return {
      v: PROTOCOL_VERSION,
      type: 'scenario',
      name: sc.name,
      description: sc.description,
      topology: sc.topology,
      source: this.source,
      text: this.sourceText,
      regulated: sc.topology === 'buck' ? { name: 'output voltage', unit: 'V' } : { name: 'load current', unit: 'A' },
      load: { kind: loadKind, value: loadKind === 'iA' ? prof.loadIA.valueAt(0) : prof.loadROhm.valueAt(0) },
      supervisorAvailable: this.run.supervisor !== undefined,
      supervisorOn: this.run.supervisor !== undefined && prof.supervisorOn.valueAt(0) >= 0.5,
      heatDemandW: prof.heatDemandW.valueAt(0),
      inletC: prof.inletC.valueAt(0),
      knobs: { fswHz: prof.fswHz.valueAt(0), deadTimeS: prof.deadTimeS.valueAt(0), vDriveV: prof.vDriveV.valueAt(0) },
      gains: { kp: prof.controlKp.valueAt(0), ki: prof.controlKi.valueAt(0), basis: this.run.sys.pi.basis },
      ranges: { fswHz: fswRange, deadTimeS: dtRange, vDriveV: vgRange, heatDemandW: [0, this.demandMaxW()] },
      recordIntervalS: sc.sim.recordIntervalS,
      tjLimitC: Math.min(plant.leg.hs.tjMaxC, plant.leg.ls.tjMaxC) - sc.limits.tjMarginK,
      pmFloorDeg: sup?.pmFloorDeg ?? 45,
    };
  }

  /** A slider range for the demand: the largest demand the scenario's own profile asks for, with room above. */
  private demandMaxW(): number {
    const p = this.scenario.profiles.heatDemandW;
    let maxW = 0;
    if (typeof p === 'number') maxW = p;
    else if (p && 'step' in p) maxW = Math.max(...p.step.map((x) => x[1]));
    else if (p && 'ramp' in p) maxW = Math.max(...p.ramp.map((x) => x[1]), ...(p.holds ?? []).map((x) => x[1]));
    return Math.max(20, Math.ceil((maxW * 1.5) / 10) * 10);
  }

  // ------------------------------------------------------------------ messages

  private status(message = '', ack?: string, id?: number): void {
    this.sink.send({
      v: PROTOCOL_VERSION,
      type: 'status',
      state: this.state,
      tS: this.tS,
      speed: this.speed,
      simStatus: this.run?.sim.status ?? 'ok',
      message,
      records: this.trace.length,
      ...(ack !== undefined ? { ack } : {}),
      ...(id !== undefined ? { id } : {}),
    });
  }

  error(code: ErrorCode, message: string, extra: { problems?: Problem[]; ref?: string; id?: number } = {}): void {
    this.sink.send({ v: PROTOCOL_VERSION, type: 'error', code, message, ...extra });
  }

  private setState(s: SessionState): void {
    const was = this.state === 'running';
    this.state = s;
    const is = s === 'running';
    if (was !== is) this.opts.onRunningChange?.(is);
    this.dirty = true;
  }

  private fail(e: unknown): void {
    const msg = e instanceof Error ? e.message : String(e);
    this.opts.log?.(`session ${this.id}: failed: ${e instanceof Error ? (e.stack ?? msg) : msg}`);
    this.setState('failed');
    this.mapJob = undefined;
    this.error('sessionFailed', `the session failed: ${msg}; reset or load a scenario to go on`);
    this.status(`failed: ${msg}`);
  }

  // ------------------------------------------------------------------ commands

  /** Apply one validated command. Errors go back as error messages; the session stays up. */
  async handle(cmd: Command): Promise<void> {
    if (this.disposed) return;
    try {
      const note = await this.apply(cmd);
      this.dirty = true;
      if (cmd.type !== 'margins') this.status(note ?? '', cmd.type, cmd.id);
    } catch (e) {
      if (e instanceof SessionError) this.error(e.code, e.message, { problems: e.problems, ref: cmd.type, id: cmd.id });
      else if (e instanceof ScenarioError)
        this.error('badScenario', `the scenario is not valid (${e.problems.length} problem${e.problems.length === 1 ? '' : 's'})`, {
          problems: e.problems.map((p) => ({ path: p.path, message: p.message })),
          ref: cmd.type,
          id: cmd.id,
        });
      else this.fail(e);
    }
  }

  private requireLive(what: string): void {
    if (this.state === 'ended' || this.state === 'failed')
      throw new SessionError('notAllowed', `${what}: the run has ${this.state === 'failed' ? 'failed' : 'ended'}; reset to start again`);
  }

  private async apply(cmd: Command): Promise<string | undefined> {
    const sim = this.run.sim;
    switch (cmd.type) {
      case 'start':
        this.requireLive('start');
        if (this.state !== 'running') {
          this.lastTickMs = this.opts.now();
          this.simTargetS = sim.t;
          this.roundStartS = sim.t;
          this.setState('running');
        }
        return undefined;
      case 'pause':
        if (this.state === 'running') this.setState('paused');
        return undefined;
      case 'reset':
        this.install(this.scenario, this.sourceText, this.source);
        return 'reset to t = 0';
      case 'speed':
        this.speed = cmd.speed;
        this.simTargetS = sim.t;
        return undefined;
      case 'setDemand':
        this.requireLive('setDemand');
        sim.setInput('heatDemandW', cmd.heatDemandW);
        return this.run.supervisor ? undefined : 'this scenario has no supervisor: the demand is recorded, nothing acts on it';
      case 'loadStep':
        return this.loadStep(cmd);
      case 'setInlet':
        this.requireLive('setInlet');
        sim.setInput('inletC', cmd.inletC);
        return undefined;
      case 'supervisor':
        return this.supervisor(cmd.on);
      case 'manual':
        return this.manual(cmd);
      case 'gains':
        this.requireLive('gains');
        if (cmd.kp !== undefined) sim.setInput('controlKp', cmd.kp);
        if (cmd.ki !== undefined) sim.setInput('controlKi', cmd.ki);
        return undefined;
      case 'loadScenario':
        return this.loadScenario(cmd);
      case 'margins':
        this.sendMargins(cmd.id, cmd.map !== false);
        return undefined;
    }
  }

  private loadStep(cmd: CommandOf<'loadStep'>): string | undefined {
    this.requireLive('loadStep');
    if (this.scenario.topology !== 'buck')
      throw new SessionError('notAllowed', 'loadStep: load steps apply to the buck; the half-bridge load is set in the scenario');
    const kind = this.loadKind();
    if (kind === 'iA') {
      if (!('loadIA' in cmd)) throw new SessionError('badCommand', 'loadStep: this scenario has a current load; send loadIA (A)');
      this.run.sim.setInput('loadIA', cmd.loadIA);
    } else {
      if (!('loadROhm' in cmd)) throw new SessionError('badCommand', 'loadStep: this scenario has a resistive load; send loadROhm (Ω)');
      this.run.sim.setInput('loadROhm', cmd.loadROhm);
    }
    return undefined;
  }

  private supervisor(on: boolean): string | undefined {
    this.requireLive('supervisor');
    const sim = this.run.sim;
    if (!this.run.supervisor) throw new SessionError('notAllowed', 'supervisor: this scenario has no supervisor section');
    if (!on) {
      // Bumpless: the manual knobs start where the supervisor left them.
      const k = sim.knobs;
      sim.setInput('fswHz', k.fswHz);
      sim.setInput('deadTimeS', k.deadTimeS);
      sim.setInput('vDriveV', k.vDriveV);
    }
    sim.setInput('supervisorOn', on ? 1 : 0);
    return on ? 'supervisor drives fsw, dead time and gate drive' : 'manual knobs: the supervisor is off';
  }

  private supervisorOn(): boolean {
    return this.run.supervisor !== undefined && this.run.sim.profiles.supervisorOn.valueAt(this.run.sim.t) >= 0.5;
  }

  private manual(cmd: CommandOf<'manual'>): string | undefined {
    this.requireLive('manual');
    if (this.supervisorOn()) throw new SessionError('notAllowed', 'manual: the supervisor drives the knobs; switch it off first');
    const sim = this.run.sim;
    const fsw = cmd.fswHz ?? sim.knobs.fswHz;
    const dt = cmd.deadTimeS ?? sim.knobs.deadTimeS;
    if (dt * fsw >= 0.25)
      throw new SessionError('badCommand', `manual: dead time ${dt * 1e9} ns is ${(100 * dt * fsw).toFixed(1)} % of the ${fsw} Hz period; must be below 25 %`, [
        { path: cmd.deadTimeS !== undefined ? 'deadTimeS' : 'fswHz', message: 'dead time must be below 25 % of the period' },
      ]);
    if (cmd.fswHz !== undefined) sim.setInput('fswHz', cmd.fswHz);
    if (cmd.deadTimeS !== undefined) sim.setInput('deadTimeS', cmd.deadTimeS);
    if (cmd.vDriveV !== undefined) sim.setInput('vDriveV', cmd.vDriveV);
    return undefined;
  }

  private async loadScenario(cmd: CommandOf<'loadScenario'>): Promise<string> {
    let text: string;
    let source: 'case' | 'text';
    if ('name' in cmd) {
      const t = await this.opts.cases.read(cmd.name);
      if (t === undefined) throw new SessionError('unknownCase', `loadScenario: no case named ${JSON.stringify(cmd.name)}; see the case list`);
      text = t;
      source = 'case';
    } else {
      text = cmd.text;
      source = 'text';
    }
    if (this.disposed) return '';
    const scenario = parseScenarioShared(text);
    this.install(scenario, text, source);
    return `loaded ${scenario.name}`;
  }

  // ------------------------------------------------------------------ stability

  private livePoint(): LivePoint {
    const sim = this.run.sim;
    const snap = sim.snapshot();
    const net = this.run.sys.net;
    const t = sim.t;
    const prof = sim.profiles;
    const kind = this.loadKind();
    return {
      fswHz: snap.knobs.fswHz,
      deadTimeS: snap.knobs.deadTimeS,
      vDriveV: snap.knobs.vDriveV,
      ...(this.scenario.topology === 'buck' ? (kind === 'iA' ? { loadIA: prof.loadIA.valueAt(t) } : { loadROhm: prof.loadROhm.valueAt(t) }) : {}),
      vinV: prof.vinV.valueAt(t),
      tjHsC: snap.tempsC[net.layout.junction[0]],
      tjLsC: snap.tempsC[net.layout.junction[1]],
      kp: prof.controlKp.valueAt(t),
      ki: prof.controlKi.valueAt(t),
    };
  }

  private sendMargins(id: number | undefined, withMap: boolean): void {
    if (!this.scenario.control) throw new SessionError('analysisFailed', 'margins: the scenario has no control section');
    const p = this.livePoint();
    const result = stabilityAt(this.scenario, p);
    this.sink.send({ v: PROTOCOL_VERSION, type: 'margins', tS: this.tS, ...(id !== undefined ? { id } : {}), result: jsonSafe({ kind: 'point', ...result }) });
    if (withMap) {
      const spec = mapSpecFor(this.scenario, p);
      this.mapJob = { spec, point: p, row: 0, pmDeg: [], gmDb: [], id };
    }
  }

  private stepMapJob(): void {
    const job = this.mapJob;
    if (!job) return;
    const row = mapRow(this.scenario, job.point, job.spec, job.row);
    job.pmDeg.push(row.pmDeg);
    job.gmDb.push(row.gmDb);
    job.row++;
    if (job.row >= job.spec.vDriveV.length) {
      this.mapJob = undefined;
      const sup = this.scenario.supervisor;
      this.sink.send({
        v: PROTOCOL_VERSION,
        type: 'margins',
        tS: this.tS,
        ...(job.id !== undefined ? { id: job.id } : {}),
        result: jsonSafe({
          kind: 'map',
          x: { name: 'switching frequency', unit: 'Hz', values: job.spec.fswHz },
          y: { name: 'gate drive', unit: 'V', values: job.spec.vDriveV },
          pmDeg: job.pmDeg,
          gmDb: job.gmDb,
          current: { x: job.point.fswHz, y: job.point.vDriveV },
          pmFloorDeg: sup?.pmFloorDeg ?? 45,
        }),
      });
    }
  }

  private updateMarginAlongRun(nowMs: number): void {
    if (!this.scenario.control || nowMs - this.marginAtMs < MARGIN_EVERY_MS) return;
    this.marginAtMs = nowMs;
    const p = this.livePoint();
    // Only a new operating point (to analysis resolution) is worth a new evaluation.
    const key = [Math.round(p.fswHz / 1000), Math.round(p.deadTimeS * 1e9 / 5), Math.round(p.vDriveV * 10), p.loadROhm, p.loadIA, p.vinV, Math.round(p.tjHsC / 2), Math.round(p.tjLsC / 2), p.kp, p.ki].join('|');
    if (key === this.marginKey && this.margin) {
      this.margin = { ...this.margin, tS: this.tS };
      return;
    }
    this.marginKey = key;
    const m = pointMargin(this.scenario, p, 8);
    const fin = (x: number): number | null => (Number.isFinite(x) ? x : null);
    this.margin = 'refused' in m
      ? { tS: this.tS, pmDeg: null, gmDb: null, crossoverHz: null }
      : { tS: this.tS, pmDeg: fin(m.stable ? m.pmDeg : Math.min(m.pmDeg, 0)), gmDb: fin(m.gmDb), crossoverHz: fin(m.crossoverHz) };
  }

  // ------------------------------------------------------------------ pacing

  private advance(budgetMs: number, nowMs: number, more: boolean): void {
    const sim = this.run.sim;
    // A further slice in the same round continues toward the target already set; it adds no wall
    // time. A long gap (a busy round, a stalled process) counts up to the catch-up limit.
    const wallDtS = more ? 0 : Math.min(Math.max(nowMs - this.lastTickMs, 0) / 1000, CATCH_UP_WALL_S);
    const t0 = sim.t;
    const target = this.speed === 'max' ? Infinity : Math.max(this.simTargetS, t0) + this.speed * wallDtS;
    const opts = this.opts;
    const deadline = opts.now() + budgetMs;
    const spent = (): boolean => opts.now() >= deadline;
    let budgetHit = false;
    // The engine yields when the slice is spent (polled every few hundred iterations: the cost of
    // simulated time is spiky — a demand step sets the knobs slewing and the loop sampling at the
    // PWM rate), so one expensive stretch cannot hold up the other sessions on this thread.
    while (sim.t < target - 1e-9 && !sim.done && this.trace.length < this.opts.traceMaxRecords) {
      if (spent()) { budgetHit = true; break; }
      sim.advanceUntil(Math.min(target, sim.t + MAX_CHUNK_S), spent);
    }
    // Falling behind: keep up to CATCH_UP_WALL_S of debt, made up from time the thread has to
    // spare (later slices of this round or later rounds), so a heavy stretch delays the session
    // but does not slow it for good; past that the debt is dropped, so an overloaded server runs
    // its sessions as fast as it can without a backlog that grows without bound.
    const maxDebtS = this.speed === 'max' ? 0 : this.speed * CATCH_UP_WALL_S;
    this.simTargetS = this.speed === 'max' ? sim.t : budgetHit ? Math.min(target, sim.t + maxDebtS) : target;
    if (!more) {
      // Pace over the wall time since the last round began, whatever slices that round took.
      this.noteProgress(t0 - this.roundStartS, wallDtS);
      this.roundStartS = t0;
    }
    if (sim.status !== 'ok') {
      this.setState('failed');
      this.status(`simulation ${sim.status}: ${sim.cause ?? 'no cause given'}`);
    } else if (this.trace.length >= this.opts.traceMaxRecords) {
      this.setState('paused');
      this.status(`trace limit reached (${this.opts.traceMaxRecords} records): download what you need, then reset`);
    }
  }

  private noteProgress(dsS: number, wallDtS: number): void {
    if (wallDtS > 0) this.achievedSpeed = 0.8 * this.achievedSpeed + 0.2 * (dsS / wallDtS);
  }

  /** One pacing step: compute, then a frame (tests call it directly; the server's scheduler calls the two halves). */
  tick(): void {
    this.computeTick(this.opts.budgetMs());
    this.frameTick();
  }

  /**
   * Advance the simulation by up to budgetMs of compute (0: this round has no time for it; it falls
   * behind). `more`: a further slice in the same round for a session still `behind`, from time the
   * other sessions left unused.
   */
  computeTick(budgetMs: number, more = false): void {
    if (this.disposed) return;
    try {
      const now = this.opts.now();
      // No time this round (budgetMs 0): the pace target still moves on and the debt is kept, as
      // for a slice that ran out.
      if (this.state === 'running' && (budgetMs > 0 || !more)) this.advance(budgetMs, now, more);
      if (!more) this.lastTickMs = now;
      if (more) return;
      if (this.mapJob && budgetMs > 0) this.stepMapJob();
      if (this.state === 'running' && budgetMs > 0) this.updateMarginAlongRun(now);
    } catch (e) {
      this.fail(e);
    }
  }

  /** Running and short of its pace target after its last slice (more compute would be used). */
  get behind(): boolean {
    return this.state === 'running' && !this.disposed && !this.run.sim.done && this.run.sim.t < this.simTargetS - 1e-9;
  }

  frameTick(): void {
    if (this.disposed) return;
    try {
      this.maybeFrame(this.opts.now());
    } catch (e) {
      this.fail(e);
    }
  }

  get running(): boolean {
    return this.state === 'running' && !this.disposed;
  }

  private live(now: number): Record<string, number | string | null> {
    const sim = this.run.sim;
    const snap = sim.snapshot();
    const net = this.run.sys.net;
    const t = sim.t;
    const prof = sim.profiles;
    const o = snap.outs;
    const r = this.lastRecord;
    const fin = (x: unknown): number | null => (typeof x === 'number' && Number.isFinite(x) ? x : null);
    const tjHsC = snap.tempsC[net.layout.junction[0]];
    const tjLsC = snap.tempsC[net.layout.junction[1]];
    const shortfallW = typeof r?.shortfallW === 'number' ? r.shortfallW : undefined;
    const binding = typeof r?.binding === 'string' ? r.binding : undefined;
    if (now - this.cautionsAtMs >= LIVE_EVERY_MS || this.dirty) {
      this.cautionsAtMs = now;
      this.cautions = liveCautions(this.run.sys.plant, this.scenario, {
        knobs: snap.knobs, tjHsC, tjLsC, vinV: prof.vinV.valueAt(t), loadROhm: prof.loadROhm.valueAt(t), loadIA: prof.loadIA.valueAt(t),
        shortfallW, binding,
      });
    }
    return {
      tS: t,
      demandW: fin(prof.heatDemandW.valueAt(t)),
      inletC: fin(prof.inletC.valueAt(t)),
      loadROhm: fin(prof.loadROhm.valueAt(t)),
      loadIA: fin(prof.loadIA.valueAt(t)),
      supervisorOn: this.supervisorOn() ? 1 : 0,
      kp: fin(prof.controlKp.valueAt(t)),
      ki: fin(prof.controlKi.valueAt(t)),
      fswHz: snap.knobs.fswHz,
      deadTimeS: snap.knobs.deadTimeS,
      vDriveV: snap.knobs.vDriveV,
      duty: fin(snap.duty),
      iLA: fin(snap.x[0]),
      yMeasured: fin(o.yMeasured),
      reference: fin(prof.reference.valueAt(t)),
      pinW: fin(o.pinW),
      poutW: fin(o.poutW),
      totalLossW: fin(o.totalLossW),
      semiLossW: fin(o.semiW),
      tjHsC: fin(tjHsC),
      tjLsC: fin(tjLsC),
      heatsinkC: fin(snap.tempsC[net.layout.heatsink]),
      coolantC: fin(snap.tempsC[net.layout.coolant]),
      heatToCoolantW: fin(r?.heatToCoolantW),
      measuredW: fin(r?.measuredW),
      shortfallW: fin(shortfallW),
      binding: binding ?? null,
      capOutRmsA: fin(o.capOutRmsA),
      capInRmsA: fin(o.capInRmsA),
    };
  }

  private maybeFrame(now: number): void {
    const due = this.state === 'running' || this.dirty || this.frames.size > 0 || now - this.lastFrameMs >= PAUSED_FRAME_MS;
    if (!due) return;
    if (!this.sink.canSendFrame()) {
      this.merged++;
      return;
    }
    const live = this.live(now);
    const { records, dropped } = this.frames.take();
    this.sink.send({
      v: PROTOCOL_VERSION,
      type: 'frame',
      seq: this.seq++,
      tS: this.tS,
      state: this.state,
      speed: this.speed,
      achievedSpeed: this.achievedSpeed,
      records,
      merged: this.merged,
      droppedRecords: dropped,
      live,
      cautions: this.cautions,
      margin: this.margin,
    });
    this.merged = 0;
    this.dirty = false;
    this.lastFrameMs = now;
  }

  // ------------------------------------------------------------------ downloads

  /** The session as a replayable scenario (YAML text). */
  replay(): { text: string; fileName: string } {
    const sim = this.run.sim;
    if (!(sim.t > 0)) throw new SessionError('notAllowed', 'replay: the session has not run yet');
    const out = replayScenario({
      sourceText: this.sourceText,
      input: this.scenario.input,
      liveSteps: liveStepsOf(sim),
      baseAt0: baseValuesAt0(this.run.sys),
      durationS: sim.t,
      note: `${this.trace.length} records`,
    });
    return { text: out.text, fileName: `${this.scenario.name}-session.yaml` };
  }

  /** The session trace so far (records as a replay run writes them). */
  traceRecords(): readonly SimRecord[] {
    return this.trace.slice();
  }

  traceCsv(): { text: string; fileName: string } {
    // The same columns and formatting as `lossdial run` writes to trace.csv, so the files compare.
    return { text: traceCsvText(this.run.sys, this.trace), fileName: `${this.scenario.name}-session-trace.csv` };
  }
}
