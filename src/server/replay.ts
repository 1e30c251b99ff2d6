/**
 * A live session as a replayable scenario. Every live change was applied by the engine at an
 * iteration boundary as a step breakpoint at that time, so the session equals the original
 * scenario whose profiles carry those steps:
 *  - a profile that was constant (a number, or absent) becomes `{step: [[0, base], [t1, v1], ...]}`;
 *  - a step profile keeps its breakpoints before the first live change, then the live steps;
 *  - a ramp profile cannot hold a jump exactly in the present schema: it becomes a ramp through
 *    the live steps with a point just before each jump (the floating-point neighbour), which
 *    replays to rounding, and the result says so in `inexact`.
 * `sim.durationS` becomes the session's simulated time. The source text is edited in place
 * (comments and layout kept).
 */
import { parseDocument } from 'yaml';
import type { ProfileSpec } from '../scenario/schema.ts';

export type Step = readonly [number, number];

export interface ReplayInput {
  /** The scenario text the session started from. */
  sourceText: string;
  /** The validated input object of that scenario (`scenario.input`). */
  input: unknown;
  /** Live steps per profile name (only non-empty lists matter). */
  liveSteps: Readonly<Record<string, readonly Step[]>>;
  /** Value of each profile at t = 0 as the session saw it (the base before any live change). */
  baseAt0: Readonly<Record<string, number>>;
  /** Simulated time of the session (s), > 0. */
  durationS: number;
  /** One line for the header comment. */
  note?: string;
}

export interface ReplayOutput {
  text: string;
  /** Profiles whose replay matches only to rounding (a live jump on a ramp). */
  inexact: string[];
  profiles: Record<string, ProfileSpec>;
}

/** The largest double below x (x > 0). */
export function nextDown(x: number): number {
  if (x === 0) return -Number.MIN_VALUE;
  const buf = new DataView(new ArrayBuffer(8));
  buf.setFloat64(0, x);
  const bits = buf.getBigUint64(0);
  buf.setBigUint64(0, x > 0 ? bits - 1n : bits + 1n);
  return buf.getFloat64(0);
}

function rampValueAt(pts: readonly Step[], t: number): number {
  if (t <= pts[0][0]) return pts[0][1];
  for (let i = pts.length - 1; i >= 0; i--) {
    if (pts[i][0] <= t) {
      if (i === pts.length - 1) return pts[i][1];
      const f = (t - pts[i][0]) / (pts[i + 1][0] - pts[i][0]);
      return pts[i][1] + f * (pts[i + 1][1] - pts[i][1]);
    }
  }
  return pts[0][1];
}

/** One profile: its spec in the scenario input merged with the live steps. */
export function mergeProfile(base: unknown, live: readonly Step[], baseAt0: number): { spec: ProfileSpec; exact: boolean } {
  const t1 = live[0][0];
  if (base !== null && typeof base === 'object' && 'ramp' in base) {
    const pts = (base as { ramp: Step[] }).ramp;
    const out: Array<[number, number]> = pts.filter((p) => p[0] < t1).map((p) => [p[0], p[1]]);
    const before = nextDown(t1);
    if (t1 > 0 && (out.length === 0 || out[out.length - 1][0] < before)) out.push([before, rampValueAt(pts, before)]);
    live.forEach(([t, v], i) => {
      if (i > 0) {
        const b = nextDown(t);
        if (b > out[out.length - 1][0]) out.push([b, live[i - 1][1]]);
      }
      out.push([t, v]);
    });
    return { spec: { ramp: out }, exact: false };
  }
  let head: Array<[number, number]>;
  if (base !== null && typeof base === 'object' && 'step' in base) {
    head = (base as { step: Step[] }).step.filter((p) => p[0] < t1).map((p) => [p[0], p[1]]);
  } else {
    // Constant (a number, or absent: the scenario's own value). Hold it explicitly from 0, since a
    // step profile's value before its first breakpoint is the scenario field, not this constant.
    head = t1 > 0 ? [[0, baseAt0]] : [];
  }
  return { spec: { step: [...head, ...live.map(([t, v]) => [t, v] as [number, number])] }, exact: true };
}

export function replayScenario(r: ReplayInput): ReplayOutput {
  if (!(r.durationS > 0) || !Number.isFinite(r.durationS)) throw new RangeError(`replay: the session has not run yet (simulated time ${r.durationS} s)`);
  const doc = parseDocument(r.sourceText);
  if (doc.errors.length > 0) throw new Error(`replay: the session's scenario text no longer parses: ${doc.errors[0].message}`);
  const inputProfiles = ((r.input as { profiles?: Record<string, unknown> } | null)?.profiles ?? {}) as Record<string, unknown>;
  const profiles: Record<string, ProfileSpec> = {};
  const inexact: string[] = [];
  for (const [name, steps] of Object.entries(r.liveSteps)) {
    if (steps.length === 0) continue;
    const { spec, exact } = mergeProfile(inputProfiles[name], steps, r.baseAt0[name]);
    profiles[name] = spec;
    if (!exact) inexact.push(name);
    doc.setIn(['profiles', name], doc.createNode(spec, { flow: true }));
  }
  doc.setIn(['sim', 'durationS'], r.durationS);
  const lines = [
    ` Replay of a live lossdial session: ${r.durationS} s simulated${r.note ? `; ${r.note}` : ''}.`,
    ' Live changes are the step breakpoints in profiles; `lossdial run` on this file reproduces the session trace.',
  ];
  if (inexact.length > 0) lines.push(` Ramp profiles changed live (${inexact.join(', ')}) replay to floating-point rounding, not bit for bit.`);
  doc.commentBefore = [lines.join('\n'), doc.commentBefore].filter(Boolean).join('\n');
  return { text: doc.toString({ lineWidth: 0 }), inexact, profiles };
}
