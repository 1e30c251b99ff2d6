/**
 * Study specification: which scenario variants to evaluate and how. YAML or JSON, validated
 * with zod, unknown keys rejected; every problem is reported at once as `path: message`.
 *
 * A study has `gridCells × replicates` samples. The grid is the Cartesian product of its axes
 * (first axis slowest); each cell is repeated `random.samples` times with fresh random draws
 * (scenario parameters from `random.params`, device instances from `deviceSpread`).
 */
import { z } from 'zod';
import { sweepValues } from '../analysis/sweep.ts';
import { ScenarioError } from '../scenario/errors.ts';
import { parseText, problemsFromZod } from '../scenario/parse.ts';
import type { Distribution } from './distributions.ts';

export const MAX_STUDY_SAMPLES = 10_000_000;
export const DEVICE_NAMES = ['highSide', 'lowSide'] as const;
export type DeviceName = (typeof DEVICE_NAMES)[number];

const finite = () => z.number().finite();
const PATH_RE = /^[A-Za-z_$][\w$]*(\.[A-Za-z_$][\w$]*)*$/;
const FORBIDDEN_KEYS = new Set(['__proto__', 'constructor', 'prototype']);

/** Records keyed by scenario field paths; a bad key is reported at its own path. */
function pathRecord<T extends z.ZodType>(value: T) {
  return z.record(z.string(), value).superRefine((rec, ctx) => {
    for (const key of Object.keys(rec)) {
      if (!PATH_RE.test(key)) ctx.addIssue({ code: 'custom', path: [key], message: 'must be a dotted field path such as pwm.fswHz' });
      else if (key.split('.').some((k) => FORBIDDEN_KEYS.has(k))) ctx.addIssue({ code: 'custom', path: [key], message: 'not a valid field path' });
    }
  });
}

const uniformSchema = z
  .object({ dist: z.literal('uniform'), min: finite(), max: finite() })
  .strict()
  .refine((d) => d.min <= d.max, { message: 'min must not exceed max', path: ['max'] });
const normalSchema = z.object({ dist: z.literal('normal'), mean: finite(), sd: finite().nonnegative() }).strict();
const lognormalSchema = z.object({ dist: z.literal('lognormal'), median: finite().positive(), sigmaLn: finite().nonnegative() }).strict();
export const distributionSchema = z.discriminatedUnion('dist', [uniformSchema, normalSchema, lognormalSchema]);

/** A scale factor must stay positive: a uniform scale needs min > 0 (normal draws that go ≤ 0 make an invalid sample). */
const scaleSchema = distributionSchema.refine((d) => d.dist !== 'uniform' || d.min > 0, { message: 'a scale factor needs min > 0', path: ['min'] });

const axisRangeSchema = z
  .object({ from: finite(), to: finite(), steps: z.number().int().min(1).max(100_000), log: z.boolean().default(false) })
  .strict()
  .superRefine((a, ctx) => {
    // Field-level problems are reported by their own checks; only the combination is checked here.
    if (!Number.isInteger(a.steps) || a.steps < 1 || a.steps > 100_000) return;
    try {
      sweepValues(a.from, a.to, a.steps, a.log);
    } catch (e) {
      ctx.addIssue({ code: 'custom', message: e instanceof Error ? e.message : String(e) });
    }
  });
const scalar = z.union([finite(), z.string(), z.boolean()]);
const axisSchema = z.union([z.array(scalar).min(1).max(100_000), axisRangeSchema]);

const deviceSpreadSchema = z
  .object({
    at: z
      .enum(['lowestGateDrive', 'ladderEnd', 'scenario'])
      .default('lowestGateDrive')
      .describe('lowestGateDrive: gateDrive.vDriveV = supervisor.gateDrive.minV (scenario value without a supervisor); ladderEnd: also fsw and dead time at the supervisor maxima'),
    devices: z
      .array(z.enum(DEVICE_NAMES))
      .min(1)
      .default([...DEVICE_NAMES])
      .refine((d) => new Set(d).size === d.length, { message: 'list each device once' }),
    vthShiftV: distributionSchema.optional().describe('added to vth25V of each device instance'),
    rdsOnScale: scaleSchema.optional().describe('multiplies Rds,on: rSeries25Ohm × s and kAPerV2 ÷ s'),
    rdsOnMode: z.enum(['joint', 'separate']).default('joint').describe('separate: independent draws for rSeries25Ohm and kAPerV2'),
    gateChargeScale: scaleSchema.optional().describe('multiplies qgCoulomb, qgdCoulomb and cissF'),
    rthJcScale: scaleSchema.optional().describe('multiplies thermal.devices.<device>.junctionCase.rKPerW'),
    achievableHeat: z.boolean().default(false).describe('also find the most coolant heat the supervisor ladder gives under the Tj limit (needs a supervisor)'),
  })
  .strict()
  .refine((d) => d.vthShiftV || d.rdsOnScale || d.gateChargeScale || d.rthJcScale, {
    message: 'give at least one of vthShiftV, rdsOnScale, gateChargeScale, rthJcScale',
  });

export const studySpecSchema = z
  .object({
    name: z.string().min(1),
    description: z.string().default(''),
    seed: z.number().int().min(0).max(Number.MAX_SAFE_INTEGER),
    kind: z.enum(['point', 'margins', 'run']),
    set: pathRecord(z.unknown()).optional().describe('fixed overrides applied to every sample, as with --set'),
    grid: pathRecord(axisSchema).optional(),
    random: z
      .object({
        samples: z.number().int().min(1).max(MAX_STUDY_SAMPLES),
        params: pathRecord(distributionSchema).default({}),
      })
      .strict()
      .optional(),
    deviceSpread: deviceSpreadSchema.optional(),
    outputs: z.array(z.string().min(1)).min(1).optional().describe('result fields for results.csv (default: all)'),
    limits: z
      .object({ tjMarginK: finite().nonnegative().optional().describe('margin below tjMax for the risk table (default: the scenario limits.tjMarginK)') })
      .strict()
      .optional(),
  })
  .strict()
  .superRefine((s, ctx) => {
    if (s.deviceSpread && !s.random)
      ctx.addIssue({ code: 'custom', path: ['deviceSpread'], message: 'needs random.samples (how many builds to draw per grid cell)' });
    if (s.grid && Object.keys(s.grid).length === 0) ctx.addIssue({ code: 'custom', path: ['grid'], message: 'give at least one axis' });
    if (s.grid && s.random)
      for (const p of Object.keys(s.grid))
        if (p in s.random.params) ctx.addIssue({ code: 'custom', path: ['random', 'params', p], message: 'already a grid axis' });
    const outs = s.outputs ?? [];
    if (new Set(outs).size !== outs.length) ctx.addIssue({ code: 'custom', path: ['outputs'], message: 'list each output once' });
  });

export type StudySpecParsed = z.output<typeof studySpecSchema>;

/** A validated study with its grid axes expanded to value lists. */
export interface StudySpec extends Readonly<Omit<StudySpecParsed, 'grid'>> {
  readonly grid: ReadonlyArray<{ readonly path: string; readonly values: readonly (number | string | boolean)[] }>;
  readonly replicates: number;
  readonly total: number;
  /** The validated input as written, kept for the results manifest. */
  readonly input: unknown;
}

export type { Distribution };

/** Validate a plain object as a study spec. Throws ScenarioError listing every problem. */
export function parseStudySpecObject(input: unknown): StudySpec {
  if (input === null || typeof input !== 'object' || Array.isArray(input))
    throw new ScenarioError([{ path: '(root)', message: `must be a mapping of fields, got ${JSON.stringify(input) ?? 'nothing'}` }]);
  const r = studySpecSchema.safeParse(input);
  if (!r.success) throw new ScenarioError(problemsFromZod(r.error.issues, input));
  const grid = Object.entries(r.data.grid ?? {}).map(([path, axis]) => ({
    path,
    values: Array.isArray(axis) ? axis : sweepValues(axis.from, axis.to, axis.steps, axis.log),
  }));
  const cells = grid.reduce((n, a) => n * a.values.length, 1);
  const replicates = r.data.random?.samples ?? 1;
  const total = cells * replicates;
  if (total > MAX_STUDY_SAMPLES)
    throw new ScenarioError([{ path: 'grid', message: `${cells} grid cells × ${replicates} samples = ${total} samples, more than ${MAX_STUDY_SAMPLES}` }]);
  return Object.freeze({ ...r.data, grid, replicates, total, input: structuredClone(input) });
}

export function parseStudySpec(text: string): StudySpec {
  return parseStudySpecObject(parseText(text));
}
