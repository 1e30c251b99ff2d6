/**
 * Scenario text → immutable Scenario. YAML or JSON (JSON is YAML). Unknown keys are rejected;
 * every problem is reported at once as `path: message (unit), got <value>`.
 */
import { LineCounter, parseDocument } from 'yaml';
import type { z } from 'zod';
import type { DeviceParams } from '../model/device.ts';
import { ScenarioError, type ScenarioProblem } from './errors.ts';
import { PARTS } from './parts.ts';
import { deviceFields, devicePartSchema, scenarioSchema, type ScenarioParsed } from './schema.ts';
import { unitOf } from './units.ts';

export type Scenario = Readonly<Omit<ScenarioParsed, 'devices'>> & {
  readonly devices: { readonly highSide: DeviceParams; readonly lowSide: DeviceParams };
  /** The validated input as written (before defaults), kept so variants can be re-parsed. */
  readonly input: unknown;
};

function pathString(path: ReadonlyArray<PropertyKey>): string {
  let s = '';
  for (const k of path) s += typeof k === 'number' ? `[${k}]` : s ? `.${String(k)}` : String(k);
  return s;
}

function valueAt(root: unknown, path: ReadonlyArray<PropertyKey>): unknown {
  let v: unknown = root;
  for (const k of path) {
    if (v === null || typeof v !== 'object') return undefined;
    v = (v as Record<PropertyKey, unknown>)[k];
  }
  return v;
}

function show(v: unknown): string {
  if (v === undefined) return 'nothing';
  const s = JSON.stringify(v);
  return s.length > 60 ? `${s.slice(0, 57)}...` : s;
}

export function problemsFromZod(issues: readonly z.core.$ZodIssue[], root: unknown, prefix: ReadonlyArray<PropertyKey> = []): ScenarioProblem[] {
  const out: ScenarioProblem[] = [];
  for (const iss of issues) {
    const path = [...prefix, ...iss.path];
    if (iss.code === 'unrecognized_keys') {
      for (const k of iss.keys) out.push({ path: pathString([...path, k]), message: 'unknown field' });
      continue;
    }
    const last = [...path].reverse().find((k) => typeof k === 'string') as string | undefined;
    const unit = last ? unitOf(last) : undefined;
    const got = valueAt(root, iss.path);
    let msg = iss.message.replace(/^Invalid input: /, '');
    if (iss.code === 'invalid_union') msg = 'does not match any allowed form';
    out.push({ path: pathString(path), message: `${msg}${unit ? ` (unit: ${unit})` : ''}, got ${show(got)}` });
  }
  return out;
}

/** Parse YAML/JSON text into a plain value, or throw ScenarioError with line numbers. */
export function parseText(text: string): unknown {
  const lines = new LineCounter();
  const doc = parseDocument(text, { prettyErrors: false, uniqueKeys: true, lineCounter: lines });
  if (doc.errors.length > 0) {
    throw new ScenarioError(
      doc.errors.map((e) => {
        const at = lines.linePos(e.pos[0]);
        return { path: '(syntax)', message: `line ${at.line}, column ${at.col}: ${e.message.split('\n')[0]}` };
      }),
    );
  }
  let js: unknown;
  try {
    js = doc.toJS({ maxAliasCount: 100 });
  } catch (e) {
    // Unresolved aliases and alias bombs surface here as plain errors.
    throw new ScenarioError([{ path: '(syntax)', message: `cannot resolve the document: ${(e as Error).message.split('\n')[0]}` }]);
  }
  if (hasCycle(js, new Set())) throw new ScenarioError([{ path: '(syntax)', message: 'a YAML anchor refers to itself (the document is cyclic)' }]);
  return js;
}

function hasCycle(v: unknown, path: Set<unknown>): boolean {
  if (v === null || typeof v !== 'object') return false;
  if (path.has(v)) return true;
  path.add(v);
  for (const c of Object.values(v as Record<string, unknown>)) if (hasCycle(c, path)) return true;
  path.delete(v);
  return false;
}

function resolveDevice(ref: Record<string, unknown>, where: string, problems: ScenarioProblem[]): DeviceParams | undefined {
  const { part, ...overrides } = ref as { part: string };
  const base = PARTS[part];
  if (!base) {
    problems.push({ path: `${where}.part`, message: `unknown part ${show(part)}; known parts: ${Object.keys(PARTS).join(', ')}` });
    return undefined;
  }
  const merged = { ...base, ...overrides };
  const r = devicePartSchema.safeParse(merged);
  if (!r.success) {
    problems.push(...problemsFromZod(r.error.issues, merged, where.split('.')));
    return undefined;
  }
  return Object.freeze({ part, ...r.data });
}

function deepFreeze<T>(o: T): T {
  if (o && typeof o === 'object' && !Object.isFrozen(o)) {
    Object.freeze(o);
    for (const v of Object.values(o)) deepFreeze(v);
  }
  return o;
}

type DeviceRefs = ScenarioParsed['devices'];

/** Parts resolved and checked against the bus: the rules that tie `devices` to the rest. */
function resolveDevices(refs: DeviceRefs, data: Pick<ScenarioParsed, 'buck' | 'halfBridge'>): Scenario['devices'] {
  const problems: ScenarioProblem[] = [];
  const hs = resolveDevice(refs.highSide as Record<string, unknown>, 'devices.highSide', problems);
  const ls = resolveDevice(refs.lowSide as Record<string, unknown>, 'devices.lowSide', problems);
  if (problems.length > 0 || !hs || !ls) throw new ScenarioError(problems);
  return checkBus(hs, ls, data);
}

/** A part rated below the bus is refused (checked after every change to the devices). */
function checkBus(hs: DeviceParams, ls: DeviceParams, data: Pick<ScenarioParsed, 'buck' | 'halfBridge'>): Scenario['devices'] {
  const problems: ScenarioProblem[] = [];
  const vBus = data.buck?.vinV ?? data.halfBridge?.vdcV ?? 0;
  for (const [name, dev] of [['highSide', hs], ['lowSide', ls]] as const) {
    if (vBus > dev.vdsRatedV)
      problems.push({ path: `devices.${name}.part`, message: `bus ${vBus} V exceeds the part's rated ${dev.vdsRatedV} V` });
  }
  if (problems.length > 0) throw new ScenarioError(problems);
  return { highSide: hs, lowSide: ls };
}

/** Validate a plain object as a scenario. Throws ScenarioError listing every problem. */
export function parseScenarioObject(input: unknown): Scenario {
  if (input === null || typeof input !== 'object' || Array.isArray(input)) {
    throw new ScenarioError([{ path: '(root)', message: `must be a mapping of fields, got ${show(input)}` }]);
  }
  return parseOwnedInput(structuredClone(input) as Record<string, unknown>);
}

/** parseScenarioObject for an input nobody else holds (kept as the scenario's `input`, not copied). */
function parseOwnedInput(input: Record<string, unknown>): Scenario {
  const r = scenarioSchema.safeParse(input);
  if (!r.success) throw new ScenarioError(problemsFromZod(r.error.issues, input));
  const scenario = { ...r.data, devices: resolveDevices(r.data.devices, r.data), input };
  return deepFreeze(scenario) as Scenario;
}

export function parseScenario(text: string): Scenario {
  return parseScenarioObject(parseText(text));
}

/** Set a dotted path in `root` itself (a plain object the caller owns). */
function setPathInPlace(root: Record<string, unknown>, path: string, value: unknown): void {
  const keys = path.split('.');
  if (keys.some((k) => k === '' || k === '__proto__' || k === 'constructor' || k === 'prototype'))
    throw new ScenarioError([{ path, message: 'not a valid field path' }]);
  let node: Record<string, unknown> = root;
  for (let i = 0; i < keys.length - 1; i++) {
    const k = keys[i];
    const next = node[k];
    if (next === undefined) node[k] = {};
    else if (next === null || typeof next !== 'object' || Array.isArray(next))
      throw new ScenarioError([{ path, message: `${keys.slice(0, i + 1).join('.')} is not a group of fields` }]);
    node = node[k] as Record<string, unknown>;
  }
  node[keys[keys.length - 1]] = value;
}

/** Set a dotted path (`pwm.fswHz`, `thermal.devices.highSide.caseSinkKPerW`) in a plain object copy. */
export function setPath(root: unknown, path: string, value: unknown): unknown {
  const copy = structuredClone(root) as Record<string, unknown>;
  setPathInPlace(copy, path, value);
  return copy;
}

/** A copy of plain data (what a scenario input holds: objects, arrays, primitives). */
function plainCopy<T>(v: T): T {
  if (v === null || typeof v !== 'object') return v;
  if (Array.isArray(v)) return v.map(plainCopy) as T;
  const out: Record<string, unknown> = {};
  for (const k of Object.keys(v)) out[k] = plainCopy((v as Record<string, unknown>)[k]);
  return out as T;
}

/**
 * Top-level sections that no rule outside them reads, apart from the part resolution and bus
 * check of `resolveDevices`: the scenario-wide refinement (schema.ts) looks at topology, buck,
 * halfBridge, pwm and supervisor only. A patch confined to these sections re-validates just
 * them, with the same schemas, and gives the same scenario (or the same problems) as a full
 * re-parse (tests/scenario/variant.test.ts checks that equivalence on random patches).
 */
const SELF_CONTAINED = { devices: scenarioSchema.shape.devices, thermal: scenarioSchema.shape.thermal } as const;
type SelfContained = keyof typeof SELF_CONTAINED;

function sectionOf(path: string): string {
  const dot = path.indexOf('.');
  return dot < 0 ? path : path.slice(0, dot);
}

/** A variant of a scenario with some fields replaced (sweeps, --set, studies). Re-validated. */
export function withOverrides(scenario: Scenario, patch: Readonly<Record<string, unknown>>): Scenario {
  const paths = Object.keys(patch);
  const sections = new Set(paths.map(sectionOf));
  const base = scenario.input as Record<string, unknown>;
  const local = paths.length > 0 && [...sections].every((s) => s in SELF_CONTAINED && base[s] !== null && typeof base[s] === 'object' && !Array.isArray(base[s]));
  // One copy for the whole patch (studies apply a dozen device fields per sample); a local
  // patch copies only the sections it touches and shares the rest of the input.
  const input = local ? { ...base } : plainCopy(base);
  if (local) for (const s of sections) input[s] = plainCopy(base[s]);
  for (const [path, value] of Object.entries(patch)) setPathInPlace(input, path, plainCopy(value));
  return local ? withSections(scenario, input, sections as Set<SelfContained>, patch) : parseOwnedInput(input);
}

const DEVICE_LEAF = /^devices\.(highSide|lowSide)\.([A-Za-z0-9]+)$/;

/**
 * The resolved parts with some fields replaced, when every device entry of the patch sets a
 * part field (`devices.highSide.vth25V`) to a number its field schema accepts; undefined for
 * anything else. A part is a strict object of independent fields over the library part, so this
 * is what re-parsing the section gives, without it (a device-spread sample sets a dozen fields).
 */
function devicesWithLeaves(scenario: Scenario, patch: Readonly<Record<string, unknown>>): { highSide: DeviceParams; lowSide: DeviceParams } | undefined {
  const next = { highSide: scenario.devices.highSide, lowSide: scenario.devices.lowSide };
  for (const [path, value] of Object.entries(patch)) {
    if (!path.startsWith('devices.')) continue;
    const m = DEVICE_LEAF.exec(path);
    if (!m || typeof value !== 'number' || !Object.hasOwn(deviceFields, m[2])) return undefined;
    if (!deviceFields[m[2] as keyof typeof deviceFields].safeParse(value).success) return undefined;
    const side = m[1] as 'highSide' | 'lowSide';
    next[side] = { ...next[side], [m[2]]: value };
  }
  return next;
}

function withSections(scenario: Scenario, input: Record<string, unknown>, sections: ReadonlySet<SelfContained>, patch: Readonly<Record<string, unknown>>): Scenario {
  const problems: ScenarioProblem[] = [];
  const parsed: Partial<Record<SelfContained, unknown>> = {};
  const leaves = sections.has('devices') ? devicesWithLeaves(scenario, patch) : undefined;
  for (const s of Object.keys(SELF_CONTAINED) as SelfContained[]) {
    if (!sections.has(s) || (s === 'devices' && leaves)) continue; // in schema order, as a full parse reports them
    const r = SELF_CONTAINED[s].safeParse(input[s]);
    if (r.success) parsed[s] = r.data;
    else problems.push(...problemsFromZod(r.error.issues, input[s], [s]));
  }
  if (problems.length > 0) throw new ScenarioError(problems);
  const thermal = (parsed.thermal as Scenario['thermal'] | undefined) ?? scenario.thermal;
  const devices = leaves
    ? checkBus(leaves.highSide, leaves.lowSide, scenario)
    : parsed.devices
      ? resolveDevices(parsed.devices as DeviceRefs, scenario)
      : scenario.devices;
  return deepFreeze({ ...scenario, thermal, devices, input }) as Scenario;
}

/** Parse a `--set` value: numbers (1e5, 200e3), booleans, JSON arrays/objects, else a string. */
export function parseSetValue(text: string): unknown {
  const t = text.trim();
  if (/^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$/.test(t)) return Number(t);
  if (t === 'true' || t === 'false') return t === 'true';
  if (t.startsWith('[') || t.startsWith('{')) {
    try {
      return JSON.parse(t);
    } catch {
      throw new ScenarioError([{ path: '--set', message: `cannot read ${show(t)} as JSON` }]);
    }
  }
  return t;
}
