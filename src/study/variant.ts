/**
 * From a sample plan to the scenario it stands for: the study's base scenario, the operating
 * settings the device spread asks for, the grid and random parameter values, then each device
 * instance's draws applied as field overrides (`devices.highSide.vth25V`, ...) and thermal
 * paths (`thermal.devices.highSide.junctionCase.rKPerW`). Pure; every variant is re-validated.
 */
import { stableBandFor } from '../sim/supervisorHook.ts';
import { knobsAtEffort } from '../control/supervisor.ts';
import { ScenarioError, type ScenarioProblem } from '../scenario/errors.ts';
import { type Scenario, withOverrides } from '../scenario/parse.ts';
import { centre } from './distributions.ts';
import type { DeviceDraw, SamplePlan } from './sampler.ts';
import type { DeviceName, StudySpec } from './spec.ts';

export interface StudyContext {
  readonly spec: StudySpec;
  /** The scenario file with --set and the spec's `set` applied. */
  readonly base: Scenario;
  /** Knob overrides for the device spread's operating setting (`at`). */
  readonly operatingPatch: Readonly<Record<string, number>>;
  /** Margin below each device's tjMaxC used by the risk table. */
  readonly tjMarginK: number;
  /** The supervisor's effort ladder on the base scenario (undefined without a supervisor). */
  readonly ladder: Ladder | undefined;
  /**
   * The base with the operating patch applied, validated once on first use (preflight reports
   * a bad operating setting first); samples then patch only their own values on top of it.
   */
  readonly operating: () => Scenario;
}

export type Ladder = Parameters<typeof knobsAtEffort>[0];

/**
 * The supervisor's effort ladder: fsw from its lower bound to its upper bound, dead time from
 * min to max, gate drive from max to min. The fsw bounds are intersected with the stable band
 * the runner's supervisor gets (src/sim/supervisorHook.ts: margin floors at the top gate
 * drive, rounded to 0.5 V, intersected with any configured band), computed once per study.
 */
export function supervisorLadder(s: Scenario): Ladder | undefined {
  const sup = s.supervisor;
  if (!sup) return undefined;
  const vgHi = sup.gateDrive.enabled ? sup.gateDrive.maxV : s.gateDrive.vDriveV;
  const band = stableBandFor(s)(vgHi);
  const fswLo = sup.fsw.enabled ? Math.max(sup.fsw.minHz, band?.[0] ?? 0) : s.pwm.fswHz;
  const fswHi = sup.fsw.enabled ? Math.max(fswLo, Math.min(sup.fsw.maxHz, band?.[1] ?? Infinity)) : s.pwm.fswHz;
  return {
    fswLo,
    fswHi,
    fswHiBinding: 'fswMax',
    deadLo: sup.deadTime.enabled ? sup.deadTime.minS : s.pwm.deadTimeS,
    deadHi: sup.deadTime.enabled ? sup.deadTime.maxS : s.pwm.deadTimeS,
    vgHi,
    vgLo: sup.gateDrive.enabled ? sup.gateDrive.minV : s.gateDrive.vDriveV,
    vgLoBinding: 'gateDriveMin',
    enabled: [sup.fsw.enabled, sup.deadTime.enabled, sup.gateDrive.enabled],
  };
}

/**
 * Where the device spread is evaluated. The supervisor's ladder lowers the gate drive last,
 * after fsw and dead time reached their maxima, so `ladderEnd` is the setting it actually
 * reaches at full effort; `lowestGateDrive` changes the gate drive alone (to the ladder's
 * bottom: supervisor.gateDrive.minV, or the scenario's drive when the supervisor does not move
 * the gate drive or there is no supervisor).
 */
function operatingPatchOf(spec: StudySpec, base: Scenario, ladder: Ladder | undefined): Record<string, number> {
  const at = spec.deviceSpread?.at ?? 'scenario';
  if (at === 'scenario') return {};
  if (at === 'ladderEnd' && !ladder)
    throw new ScenarioError([{ path: 'deviceSpread.at', message: `ladderEnd needs a supervisor in scenario ${base.name}; use lowestGateDrive or scenario` }]);
  if (!ladder) return {};
  const patch: Record<string, number> = { 'gateDrive.vDriveV': ladder.vgLo };
  if (at === 'ladderEnd') {
    patch['pwm.fswHz'] = ladder.fswHi;
    patch['pwm.deadTimeS'] = ladder.deadHi;
  }
  return patch;
}

export function studyContext(spec: StudySpec, base: Scenario): StudyContext {
  if (spec.deviceSpread?.achievableHeat && !base.supervisor)
    throw new ScenarioError([{ path: 'deviceSpread.achievableHeat', message: `needs a supervisor in scenario ${base.name} (its ladder defines the reachable settings)` }]);
  const fixed = spec.set ? withSpecSet(base, spec.set) : base;
  const needsLadder = spec.deviceSpread !== undefined && (spec.deviceSpread.at !== 'scenario' || spec.deviceSpread.achievableHeat);
  if (needsLadder) {
    // The ladder is computed once, from the base scenario: a per-sample supervisor would silently be ignored.
    const varied = [...spec.grid.map((a) => `grid.${a.path}`), ...Object.keys(spec.random?.params ?? {}).map((p) => `random.params.${p}`)];
    const problems = varied
      .filter((p) => /^(grid|random\.params)\.supervisor\./.test(p))
      .map((p) => ({ path: p, message: 'the device spread uses the supervisor ladder of the base scenario; set supervisor fields in `set` (one study per value)' }));
    if (problems.length > 0) throw new ScenarioError(problems);
  }
  const ladder = needsLadder ? supervisorLadder(fixed) : undefined;
  const operatingPatch = operatingPatchOf(spec, fixed, ladder);
  let operating: Scenario | undefined;
  return {
    spec,
    base: fixed,
    operatingPatch,
    tjMarginK: spec.limits?.tjMarginK ?? fixed.limits.tjMarginK,
    ladder,
    operating: () => (operating ??= Object.keys(operatingPatch).length > 0 ? withOverrides(fixed, operatingPatch) : fixed),
  };
}

function withSpecSet(base: Scenario, set: Readonly<Record<string, unknown>>): Scenario {
  try {
    return withOverrides(base, set);
  } catch (e) {
    if (e instanceof ScenarioError) throw new ScenarioError(e.problems.map((p) => ({ path: `set: ${p.path}`, message: p.message })));
    throw e;
  }
}

/** The parameter patch of a sample (operating setting, seed for `run`, grid and random values). */
export function paramPatch(ctx: StudyContext, plan: SamplePlan): Record<string, unknown> {
  return { ...ctx.operatingPatch, ...ownPatch(ctx, plan) };
}

/** What a sample sets on top of the operating scenario: the seed for `run`, grid and random values. */
function ownPatch(ctx: StudyContext, plan: SamplePlan): Record<string, unknown> {
  const patch: Record<string, unknown> = {};
  if (ctx.spec.kind === 'run') patch['sim.seed'] = plan.seed;
  Object.assign(patch, plan.params);
  return patch;
}

/** Field overrides for the drawn device instances, relative to `s` (which may already carry grid values). */
export function devicePatch(s: Scenario, devices: SamplePlan['devices']): Record<string, unknown> {
  const patch: Record<string, unknown> = {};
  for (const [name, d] of Object.entries(devices ?? {}) as [DeviceName, DeviceDraw][]) {
    const dev = s.devices[name];
    const at = `devices.${name}`;
    if (d.vthShiftV !== undefined) patch[`${at}.vth25V`] = dev.vth25V + d.vthShiftV;
    if (d.rdsOnScale !== undefined) {
      patch[`${at}.rSeries25Ohm`] = dev.rSeries25Ohm * d.rdsOnScale;
      patch[`${at}.kAPerV2`] = dev.kAPerV2 / d.rdsOnScale;
    }
    if (d.rSeriesScale !== undefined) patch[`${at}.rSeries25Ohm`] = dev.rSeries25Ohm * d.rSeriesScale;
    if (d.channelScale !== undefined) patch[`${at}.kAPerV2`] = dev.kAPerV2 / d.channelScale;
    if (d.gateChargeScale !== undefined) {
      patch[`${at}.qgCoulomb`] = dev.qgCoulomb * d.gateChargeScale;
      patch[`${at}.qgdCoulomb`] = dev.qgdCoulomb * d.gateChargeScale;
      patch[`${at}.cissF`] = dev.cissF * d.gateChargeScale;
    }
    if (d.rthJcScale !== undefined) {
      const scale = d.rthJcScale;
      patch[`thermal.devices.${name}.junctionCase.rKPerW`] = s.thermal.devices[name].junctionCase.rKPerW.map((r) => r * scale);
    }
  }
  return patch;
}

export interface SampleScenarios {
  /** The sample as drawn (the nominal one when there is no device spread). */
  drawn: Scenario;
  /** The sample with nominal devices (grid and random values applied), built on first use. */
  nominal(): Scenario;
}

/** A parameter path that can change a device's nominal values, so draws must be relative to the variant. */
function touchesDevices(path: string): boolean {
  return path === 'devices' || path.startsWith('devices.') || path === 'thermal' || path.startsWith('thermal.');
}

/**
 * Both scenarios of a sample. Throws ScenarioError when the draws give an invalid scenario.
 * When no grid or random path touches the devices, the draws are relative to the base scenario
 * and the drawn variant is parsed once, from the base (the same input, so the same scenario).
 */
export function sampleScenarios(ctx: StudyContext, plan: SamplePlan): SampleScenarios {
  // Base + operating patch + the sample's own values: applying the operating patch first (once
  // per study) gives the same scenario, as the sample's values win either way.
  const own = ownPatch(ctx, plan);
  const operating = ctx.operating();
  let nominal: Scenario | undefined;
  const nominalOf = (): Scenario => (nominal ??= Object.keys(own).length > 0 ? withOverrides(operating, own) : operating);
  if (!plan.devices) {
    const s = nominalOf();
    return { drawn: s, nominal: () => s };
  }
  const relative = Object.keys(own).some(touchesDevices);
  const drawn = relative
    ? withOverrides(nominalOf(), devicePatch(nominalOf(), plan.devices))
    : withOverrides(operating, { ...own, ...devicePatch(operating, plan.devices) });
  return { drawn, nominal: nominalOf };
}

/**
 * Before a study starts: every grid value alone, every random parameter at its centre and the
 * first sample's device draws must give a valid scenario; otherwise one ScenarioError naming
 * the study path (`grid.pwm.fswHz[2]`, `random.params.buck.vinV`) and the scenario's complaint.
 */
export function preflight(ctx: StudyContext): void {
  const problems: ScenarioProblem[] = [];
  const tryPatch = (where: string, patch: Record<string, unknown>): void => {
    try {
      withOverrides(ctx.base, { ...ctx.operatingPatch, ...patch });
    } catch (e) {
      if (!(e instanceof ScenarioError)) throw e;
      for (const p of e.problems) problems.push({ path: where, message: `${p.path}: ${p.message}` });
    }
  };
  tryPatch('deviceSpread.at', {});
  if (problems.length > 0) throw new ScenarioError(problems);
  for (const axis of ctx.spec.grid) {
    const before = problems.length;
    for (let v = 0; v < axis.values.length && problems.length === before; v++) tryPatch(`grid.${axis.path}[${v}]`, { [axis.path]: axis.values[v] });
  }
  for (const [path, d] of Object.entries(ctx.spec.random?.params ?? {})) tryPatch(`random.params.${path}`, { [path]: centre(d) });
  const ds = ctx.spec.deviceSpread;
  if (problems.length === 0 && ds) {
    // Each device at the centre of every spread distribution: the override paths and values must fit.
    const mid: DeviceDraw = {};
    if (ds.vthShiftV) mid.vthShiftV = centre(ds.vthShiftV);
    if (ds.rdsOnScale) mid.rdsOnScale = centre(ds.rdsOnScale);
    if (ds.gateChargeScale) mid.gateChargeScale = centre(ds.gateChargeScale);
    if (ds.rthJcScale) mid.rthJcScale = centre(ds.rthJcScale);
    try {
      const s = withOverrides(ctx.base, ctx.operatingPatch);
      withOverrides(s, devicePatch(s, Object.fromEntries(ds.devices.map((n) => [n, mid]))));
    } catch (e) {
      if (!(e instanceof ScenarioError)) throw e;
      for (const p of e.problems) problems.push({ path: 'deviceSpread', message: `at the centre of the spread: ${p.path}: ${p.message}` });
    }
  }
  if (problems.length > 0) throw new ScenarioError(problems);
}
