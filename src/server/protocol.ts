/**
 * The live-session wire protocol, version 1: JSON text messages, each a discriminated union on
 * `type` with `v: 1`. Client → server commands are validated here with zod (strict: unknown
 * fields are rejected); server → client messages have zod schemas too, used by the tests to check
 * every message the server sends (the page has its own small validator in web/protocol.js).
 *
 * Parsing happens in two stages so errors are specific: the envelope (`v`, `type`) first, then
 * the command's own schema, whose problems come back with their field paths.
 */
import { z } from 'zod';

export const PROTOCOL_VERSION = 1;

/** Sanity bounds on live values (the session adds scenario-specific checks on top). */
export const LIVE_BOUNDS = Object.freeze({
  speedMin: 0.1,
  speedMax: 100_000,
  demandMaxW: 1e6,
  loadROhmMin: 1e-4,
  loadROhmMax: 1e6,
  loadIAMax: 1e4,
  inletCMin: -60,
  inletCMax: 150,
  fswHzMin: 1e3,
  fswHzMax: 2e6,
  deadTimeSMax: 2e-6,
  vDriveVMin: 0.5,
  vDriveVMax: 30,
  kpMax: 1e6,
  kiMax: 1e9,
  scenarioTextMaxChars: 128 * 1024,
});

const B = LIVE_BOUNDS;
const v1 = { v: z.literal(PROTOCOL_VERSION), id: z.number().int().min(0).max(2 ** 31).optional() };
const num = () => z.number().finite();
const cmd = <T extends string, S extends z.ZodRawShape>(type: T, shape: S) =>
  z.object({ ...v1, type: z.literal(type), ...shape }).strict();

/** A case name: letters, digits, dot, dash, underscore; never a path. */
export const CASE_NAME = /^[A-Za-z0-9][A-Za-z0-9._-]{0,63}$/;

export const commandSchemas = {
  start: cmd('start', {}),
  pause: cmd('pause', {}),
  reset: cmd('reset', {}),
  speed: cmd('speed', { speed: z.union([num().min(B.speedMin).max(B.speedMax), z.literal('max')]) }),
  setDemand: cmd('setDemand', { heatDemandW: num().min(0).max(B.demandMaxW) }),
  loadStep: z.union([
    cmd('loadStep', { loadROhm: num().min(B.loadROhmMin).max(B.loadROhmMax) }),
    cmd('loadStep', { loadIA: num().min(0).max(B.loadIAMax) }),
  ]),
  setInlet: cmd('setInlet', { inletC: num().min(B.inletCMin).max(B.inletCMax) }),
  supervisor: cmd('supervisor', { on: z.boolean() }),
  manual: cmd('manual', {
    fswHz: num().min(B.fswHzMin).max(B.fswHzMax).optional(),
    deadTimeS: num().min(0).max(B.deadTimeSMax).optional(),
    vDriveV: num().min(B.vDriveVMin).max(B.vDriveVMax).optional(),
  }).refine((m) => m.fswHz !== undefined || m.deadTimeS !== undefined || m.vDriveV !== undefined, {
    message: 'give at least one of fswHz, deadTimeS, vDriveV',
  }),
  gains: cmd('gains', { kp: num().min(0).max(B.kpMax).optional(), ki: num().min(0).max(B.kiMax).optional() }).refine(
    (m) => m.kp !== undefined || m.ki !== undefined,
    { message: 'give kp, ki or both' },
  ),
  loadScenario: z.union([
    cmd('loadScenario', { name: z.string().regex(CASE_NAME, 'must be a case name (letters, digits, . _ -), not a path') }),
    cmd('loadScenario', { text: z.string().min(1).max(B.scenarioTextMaxChars) }),
  ]),
  margins: cmd('margins', { map: z.boolean().optional() }),
} as const;

export type CommandType = keyof typeof commandSchemas;
export type Command = { [K in CommandType]: z.output<(typeof commandSchemas)[K]> }[CommandType];
export type CommandOf<K extends CommandType> = z.output<(typeof commandSchemas)[K]>;
export const COMMAND_TYPES = Object.keys(commandSchemas) as CommandType[];

export type ErrorCode =
  | 'badJson'
  | 'badEnvelope'
  | 'badVersion'
  | 'unknownCommand'
  | 'badCommand'
  | 'tooLarge'
  | 'rateLimited'
  | 'notAllowed'
  | 'badScenario'
  | 'unknownCase'
  | 'tooManySessions'
  | 'sessionFailed'
  | 'analysisFailed'
  | 'internal';

export interface Problem {
  path: string;
  message: string;
}

export type ParseResult =
  | { ok: true; command: Command }
  | { ok: false; code: ErrorCode; message: string; problems?: Problem[]; ref?: string; id?: number };

function issuesToProblems(issues: readonly z.core.$ZodIssue[]): Problem[] {
  const out: Problem[] = [];
  for (const iss of issues) {
    if (iss.code === 'invalid_union') {
      // Report the branch that got furthest (fewest issues) rather than "no match".
      const branches = (iss as unknown as { errors: z.core.$ZodIssue[][] }).errors ?? [];
      const best = [...branches].sort((a, b) => a.length - b.length)[0];
      if (best && best.length > 0) {
        out.push(...issuesToProblems(best));
        continue;
      }
    }
    if (iss.code === 'unrecognized_keys') {
      for (const k of iss.keys) out.push({ path: [...iss.path, k].join('.'), message: 'unknown field' });
      continue;
    }
    out.push({ path: iss.path.map(String).join('.') || '(root)', message: iss.message.replace(/^Invalid input: /, '') });
  }
  return out;
}

function show(v: unknown): string {
  let s: string;
  try {
    s = JSON.stringify(v) ?? String(v);
  } catch {
    s = String(v);
  }
  return s.length > 40 ? `${s.slice(0, 37)}...` : s;
}

/** Text of one websocket message → a validated command or a specific error. Never throws. */
export function parseCommand(text: string): ParseResult {
  let raw: unknown;
  try {
    raw = JSON.parse(text);
  } catch (e) {
    return { ok: false, code: 'badJson', message: `not valid JSON: ${(e as Error).message}` };
  }
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw))
    return { ok: false, code: 'badEnvelope', message: `a command must be a JSON object, got ${show(raw)}` };
  const env = raw as Record<string, unknown>;
  const id = typeof env.id === 'number' && Number.isInteger(env.id) && env.id >= 0 && env.id <= 2 ** 31 ? env.id : undefined;
  if (env.v !== PROTOCOL_VERSION)
    return { ok: false, code: 'badVersion', message: `protocol version must be ${PROTOCOL_VERSION}, got ${show(env.v)}`, id };
  if (typeof env.type !== 'string')
    return { ok: false, code: 'badEnvelope', message: `field "type" must be a command name, got ${show(env.type)}`, id };
  const type = env.type;
  if (!Object.prototype.hasOwnProperty.call(commandSchemas, type))
    return { ok: false, code: 'unknownCommand', message: `unknown command ${show(type)}; known: ${COMMAND_TYPES.join(', ')}`, ref: type.slice(0, 40), id };
  const schema = commandSchemas[type as CommandType] as z.ZodType<Command>;
  const r = schema.safeParse(raw);
  if (!r.success) {
    const problems = issuesToProblems(r.error.issues);
    return {
      ok: false,
      code: 'badCommand',
      message: `${type}: ${problems.map((p) => `${p.path}: ${p.message}`).join('; ')}`,
      problems,
      ref: type,
      id,
    };
  }
  return { ok: true, command: r.data };
}

// ---------------------------------------------------------------- server → client

/** Columns carried in frames (decimated); the chart series are drawn from these. */
export const FRAME_COLUMNS = [
  'tS', 'demandW', 'heatToCoolantW', 'measuredW', 'targetW', 'totalLossW', 'semiLossW', 'hsLossW', 'lsLossW',
  'passiveLossW', 'gateDriverW', 'efficiency', 'yMeasured', 'reference', 'duty', 'fswHz', 'deadTimeS', 'vDriveV',
  'tjHsC', 'tjLsC', 'heatsinkC', 'coolantC', 'inletC', 'loadROhm', 'loadIA', 'shortfallW',
] as const;
export type FrameColumn = (typeof FRAME_COLUMNS)[number];

export type SessionState = 'idle' | 'running' | 'paused' | 'ended' | 'failed';

const cautionSchema = z.object({ code: z.string(), severity: z.enum(['warning', 'danger']), message: z.string() }).strict();
const nullableNum = z.number().nullable();

export const serverSchemas = {
  hello: z
    .object({
      v: z.literal(PROTOCOL_VERSION),
      type: z.literal('hello'),
      sessionId: z.string(),
      server: z.string(),
      cases: z.array(z.string()),
      limits: z
        .object({ maxMessageBytes: z.number(), commandsPerSecond: z.number(), frameHz: z.number(), traceMaxRecords: z.number() })
        .strict(),
      hardwareNotice: z.string(),
    })
    .strict(),
  scenario: z
    .object({
      v: z.literal(PROTOCOL_VERSION),
      type: z.literal('scenario'),
      name: z.string(),
      description: z.string(),
      topology: z.enum(['buck', 'halfBridge']),
      source: z.enum(['case', 'text']),
      text: z.string(),
      regulated: z.object({ name: z.string(), unit: z.string() }).strict(),
      load: z.object({ kind: z.enum(['rOhm', 'iA']), value: z.number() }).strict(),
      supervisorAvailable: z.boolean(),
      supervisorOn: z.boolean(),
      heatDemandW: z.number(),
      inletC: z.number(),
      knobs: z.object({ fswHz: z.number(), deadTimeS: z.number(), vDriveV: z.number() }).strict(),
      gains: z.object({ kp: z.number(), ki: z.number(), basis: z.string() }).strict(),
      ranges: z
        .object({
          fswHz: z.tuple([z.number(), z.number()]),
          deadTimeS: z.tuple([z.number(), z.number()]),
          vDriveV: z.tuple([z.number(), z.number()]),
          heatDemandW: z.tuple([z.number(), z.number()]),
        })
        .strict(),
      recordIntervalS: z.number(),
      tjLimitC: z.number(),
      pmFloorDeg: z.number(),
    })
    .strict(),
  frame: z
    .object({
      v: z.literal(PROTOCOL_VERSION),
      type: z.literal('frame'),
      seq: z.number().int(),
      tS: z.number(),
      state: z.enum(['idle', 'running', 'paused', 'ended', 'failed']),
      speed: z.union([z.number(), z.literal('max')]),
      achievedSpeed: z.number(),
      records: z.record(z.string(), z.array(nullableNum)),
      merged: z.number().int(),
      droppedRecords: z.number().int(),
      live: z.record(z.string(), z.union([z.number(), z.string(), z.null()])),
      cautions: z.array(cautionSchema),
      margin: z.object({ tS: z.number(), pmDeg: nullableNum, gmDb: nullableNum, crossoverHz: nullableNum }).strict().nullable(),
    })
    .strict(),
  status: z
    .object({
      v: z.literal(PROTOCOL_VERSION),
      type: z.literal('status'),
      state: z.enum(['idle', 'running', 'paused', 'ended', 'failed']),
      tS: z.number(),
      speed: z.union([z.number(), z.literal('max')]),
      simStatus: z.string(),
      message: z.string(),
      records: z.number().int(),
      ack: z.string().optional(),
      id: z.number().int().optional(),
    })
    .strict(),
  error: z
    .object({
      v: z.literal(PROTOCOL_VERSION),
      type: z.literal('error'),
      code: z.string(),
      message: z.string(),
      problems: z.array(z.object({ path: z.string(), message: z.string() }).strict()).optional(),
      ref: z.string().optional(),
      id: z.number().int().optional(),
    })
    .strict(),
  margins: z
    .object({
      v: z.literal(PROTOCOL_VERSION),
      type: z.literal('margins'),
      tS: z.number(),
      id: z.number().int().optional(),
      result: z.unknown(),
    })
    .strict(),
} as const;

export type ServerMessageType = keyof typeof serverSchemas;
export type ServerMessage = { [K in ServerMessageType]: z.output<(typeof serverSchemas)[K]> }[ServerMessageType];
export type ServerMessageOf<K extends ServerMessageType> = z.output<(typeof serverSchemas)[K]>;
export type HelloMessage = ServerMessageOf<'hello'>;
export type ScenarioMessage = ServerMessageOf<'scenario'>;
export type FrameMessage = ServerMessageOf<'frame'>;
export type StatusMessage = ServerMessageOf<'status'>;
export type ErrorMessage = ServerMessageOf<'error'>;
export type MarginsMessage = ServerMessageOf<'margins'>;

/** Validate a server message (tests and debugging). */
export function checkServerMessage(m: unknown): { ok: true } | { ok: false; message: string } {
  if (m === null || typeof m !== 'object') return { ok: false, message: 'not an object' };
  const type = (m as { type?: unknown }).type;
  if (typeof type !== 'string' || !(type in serverSchemas)) return { ok: false, message: `unknown type ${show(type)}` };
  const r = serverSchemas[type as ServerMessageType].safeParse(m);
  return r.success ? { ok: true } : { ok: false, message: issuesToProblems(r.error.issues).map((p) => `${p.path}: ${p.message}`).join('; ') };
}
