/**
 * A live session as a replayable scenario. Every live change was applied by the engine at an
 * iteration boundary as a step breakpoint at that time, so the session equals the original
 * scenario whose profiles carry those steps:
 *  - a profile that was constant (a number, or absent) becomes `{step: [[0, base], [t1, v1], ...]}`;
 *  - a step profile keeps its breakpoints before the first live change, then the live steps;
 *  - a ramp profile keeps its points and gets the live steps as `holds` (the same overlay the
 *    session applied, `LiveProfile`, so it replays bit for bit too).
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
  profiles: Record<string, ProfileSpec>;
}

/** One profile: its spec in the scenario input merged with the live steps. */
export function mergeProfile(base: unknown, live: readonly Step[], baseAt0: number): ProfileSpec {
  const t1 = live[0][0];
  const liveSteps = live.map(([t, v]) => [t, v] as [number, number]);
  if (base !== null && typeof base === 'object' && 'ramp' in base) {
    // The ramp stays as it was; the live steps become its holds (after any earlier holds).
    const { ramp, holds } = base as { ramp: Step[]; holds?: Step[] };
    const kept = (holds ?? []).filter((p) => p[0] < t1).map(([t, v]) => [t, v] as [number, number]);
    return { ramp: ramp.map(([t, v]) => [t, v] as [number, number]), holds: [...kept, ...liveSteps] };
  }
  let head: Array<[number, number]>;
  if (base !== null && typeof base === 'object' && 'step' in base) {
    head = (base as { step: Step[] }).step.filter((p) => p[0] < t1).map((p) => [p[0], p[1]]);
  } else {
    // Constant (a number, or absent: the scenario's own value). Hold it explicitly from 0, since a
    // step profile's value before its first breakpoint is the scenario field, not this constant.
    head = t1 > 0 ? [[0, baseAt0]] : [];
  }
  return { step: [...head, ...liveSteps] };
}

export function replayScenario(r: ReplayInput): ReplayOutput {
  if (!(r.durationS > 0) || !Number.isFinite(r.durationS)) throw new RangeError(`replay: the session has not run yet (simulated time ${r.durationS} s)`);
  const doc = parseDocument(r.sourceText);
  if (doc.errors.length > 0) throw new Error(`replay: the session's scenario text no longer parses: ${doc.errors[0].message}`);
  const inputProfiles = ((r.input as { profiles?: Record<string, unknown> } | null)?.profiles ?? {}) as Record<string, unknown>;
  const profiles: Record<string, ProfileSpec> = {};
  for (const [name, steps] of Object.entries(r.liveSteps)) {
    if (steps.length === 0) continue;
    const spec = mergeProfile(inputProfiles[name], steps, r.baseAt0[name]);
    profiles[name] = spec;
    doc.setIn(['profiles', name], doc.createNode(spec, { flow: true }));
  }
  doc.setIn(['sim', 'durationS'], r.durationS);
  const lines = [
    ` Replay of a live lossdial session: ${r.durationS} s simulated${r.note ? `; ${r.note}` : ''}.`,
    ' Live changes are the step breakpoints in profiles; `lossdial run` on this file reproduces the session trace.',
  ];
  doc.commentBefore = [lines.join('\n'), doc.commentBefore].filter(Boolean).join('\n');
  return { text: doc.toString({ lineWidth: 0 }), profiles };
}
