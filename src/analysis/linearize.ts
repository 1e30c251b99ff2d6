/**
 * Small-signal model of the averaged plant at a steady operating point: numerical Jacobians of
 * `averagedDerivatives` (the same code the simulator integrates) by central differences.
 *
 *   dx/dt = A·δx + B·δd + E·δw,   δy = C·δx + D·δd + F·δw
 *
 * x: buck [iL, vC] or half-bridge [i, vLink]; d: duty; y: the regulated quantity (buck output
 * voltage including the ESR divider, half-bridge load current); w: disturbance inputs (source
 * voltage, load). Every column is computed with two step sizes (1e-6 and 1e-4 of scale); their
 * relative discrepancy is reported (large values mean the model is not smooth at the point,
 * e.g. a valley current at zero). States that cannot move (a DC link fed by an ideal source)
 * are dropped. A point that is not an equilibrium is refused.
 */
import { type AvgInputs, type AvgOutputs, averagedDerivatives, newAvgOutputs } from '../model/averaged.ts';
import type { ElectricalPoint } from '../model/electrical.ts';
import { newLegResult } from '../model/leg.ts';
import type { Plant } from '../model/plant.ts';
import { complexTransfer } from './complexTransfer.ts';

export type DisturbanceName = 'vSourceV' | 'loadROhm' | 'loadIA' | 'backEmfV';

export interface LinearPlant {
  /** Number of (kept) states. */
  readonly n: number;
  readonly stateNames: readonly string[];
  /** n×n row-major, 1/s. */
  readonly a: Float64Array;
  /** n, state units per unit duty per second. */
  readonly b: Float64Array;
  /** n, output units per state unit. */
  readonly c: Float64Array;
  readonly d: number;
  readonly disturbances: readonly DisturbanceName[];
  /** n×nw row-major. */
  readonly e: Float64Array;
  /** nw. */
  readonly f: Float64Array;
  /** The point: kept states, duty, output. */
  readonly x0: Float64Array;
  readonly duty0: number;
  readonly y0: number;
  /** max |dx/dt| relative to the rates a unit-scale perturbation would produce (0 at an exact equilibrium). */
  readonly equilibriumResidual: number;
  /** Relative discrepancy of the Jacobian between the two step sizes. */
  readonly stepDiscrepancy: number;
  readonly stepsRel: readonly [number, number];
  readonly warnings: readonly string[];
}

/** The point is not one a small-signal model can be taken at. */
export class LinearizationError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'LinearizationError';
  }
}

export interface LinearizeOptions {
  /** Disturbance inputs to differentiate with respect to (default none). */
  disturbances?: readonly DisturbanceName[];
  /** Refuse when the equilibrium residual exceeds this (default 1e-4: the state is within 0.01 % of its scale of an equilibrium). */
  maxResidual?: number;
  /** Relative step of the result (default 1e-6). */
  stepRel?: number;
  /** Relative step of the check (default 1e-4). */
  checkStepRel?: number;
}

/** Relative discrepancy above which the linearization carries a warning. */
export const STEP_DISCREPANCY_WARN = 1e-3;

const STATE_NAMES = { buck: ['iL', 'vC'], halfBridge: ['i', 'vLink'] } as const;

/**
 * Jacobians of the averaged plant at (x0, u0). `u0.duty` is the operating duty; the inputs object
 * is not modified.
 */
export function linearizeAveraged(plant: Plant, x0: ArrayLike<number>, u0: Readonly<AvgInputs>, opts: LinearizeOptions = {}): LinearPlant {
  const dist = opts.disturbances ?? [];
  const maxResidual = opts.maxResidual ?? 1e-4;
  const hRel = opts.stepRel ?? 1e-6;
  const hRelCheck = opts.checkStepRel ?? 1e-4;
  const nFull = 2;
  for (let i = 0; i < nFull; i++) if (!Number.isFinite(x0[i])) throw new LinearizationError(`linearize: state ${i} must be finite, got ${x0[i]}`);
  if (!(u0.duty > 0 && u0.duty < 1)) throw new LinearizationError(`linearize: duty must be inside (0, 1), got ${u0.duty}`);
  for (const w of dist) if (!Number.isFinite(u0[w])) throw new LinearizationError(`linearize: disturbance ${w} is not used by this plant (value ${u0[w]})`);

  const leg = newLegResult();
  const outs: AvgOutputs = newAvgOutputs();
  const u: AvgInputs = { ...u0 };
  const x = Float64Array.from({ length: nFull }, (_, i) => x0[i]);
  const dx = new Float64Array(nFull);
  const evalAt = (fOut: Float64Array): number => {
    averagedDerivatives(plant, x, u, dx, leg, outs);
    fOut[0] = dx[0];
    fOut[1] = dx[1];
    return outs.yMeasured;
  };
  const f0 = new Float64Array(nFull);
  const y0 = evalAt(f0);
  if (!Number.isFinite(y0) || !Number.isFinite(f0[0]) || !Number.isFinite(f0[1]))
    throw new LinearizationError('linearize: the plant gives non-finite derivatives at the point');

  // Column j of [A B E; C D F] by central differences with relative step hr.
  const nVar = nFull + 1 + dist.length;
  const scaleOf = (j: number): number => {
    if (j < nFull) return Math.max(Math.abs(x0[j]), 1);
    if (j === nFull) return 1;
    return Math.max(Math.abs(u0[dist[j - nFull - 1]]), 1e-3);
  };
  const setVar = (j: number, v: number): void => {
    if (j < nFull) x[j] = v;
    else if (j === nFull) u.duty = v;
    else u[dist[j - nFull - 1]] = v;
  };
  const base = (j: number): number => (j < nFull ? x0[j] : j === nFull ? u0.duty : u0[dist[j - nFull - 1]]);
  const fp = new Float64Array(nFull);
  const fm = new Float64Array(nFull);
  const jac = (hr: number): Float64Array => {
    // rows: 2 derivatives + 1 output; columns: nVar
    const out = new Float64Array(3 * nVar);
    for (let j = 0; j < nVar; j++) {
      let h = hr * scaleOf(j);
      if (j === nFull) h = Math.min(h, 0.5 * Math.min(u0.duty, 1 - u0.duty));
      const b0 = base(j);
      setVar(j, b0 + h);
      const yp = evalAt(fp);
      setVar(j, b0 - h);
      const ym = evalAt(fm);
      setVar(j, b0);
      for (let i = 0; i < nFull; i++) out[i * nVar + j] = (fp[i] - fm[i]) / (2 * h);
      out[2 * nVar + j] = (yp - ym) / (2 * h);
    }
    return out;
  };
  const j1 = jac(hRel);
  const j2 = jac(hRelCheck);

  // Discrepancy per row, relative to the row's magnitude in scaled units.
  let disc = 0;
  for (let i = 0; i < 3; i++) {
    let rowMag = 0;
    for (let j = 0; j < nVar; j++) rowMag = Math.max(rowMag, Math.abs(j1[i * nVar + j]) * scaleOf(j));
    if (rowMag === 0) continue;
    for (let j = 0; j < nVar; j++) disc = Math.max(disc, (Math.abs(j1[i * nVar + j] - j2[i * nVar + j]) * scaleOf(j)) / rowMag);
  }

  // Equilibrium residual: |f_i| against the rates a unit-scale perturbation produces.
  let residual = 0;
  for (let i = 0; i < nFull; i++) {
    let rate = 0;
    for (let j = 0; j <= nFull; j++) rate += Math.abs(j1[i * nVar + j]) * scaleOf(j);
    if (rate === 0) {
      if (f0[i] !== 0) residual = Infinity;
      continue;
    }
    residual = Math.max(residual, Math.abs(f0[i]) / rate);
  }
  if (!(residual <= maxResidual)) {
    throw new LinearizationError(
      `linearize: the point is not an equilibrium (|dx/dt| is ${residual.toExponential(2)} of the plant's rates, limit ${maxResidual.toExponential(0)}; ` +
        `derivatives ${f0[0].toExponential(3)}, ${f0[1].toExponential(3)}): take the steady operating point first`,
    );
  }

  // Frozen states: rows of [A B E] that are identically zero cannot move (an ideal DC source).
  const keep: number[] = [];
  for (let i = 0; i < nFull; i++) {
    let any = false;
    for (let j = 0; j < nVar; j++) if (j1[i * nVar + j] !== 0) any = true;
    if (any) keep.push(i);
  }
  const n = keep.length;
  const a = new Float64Array(n * n);
  const b = new Float64Array(n);
  const c = new Float64Array(n);
  const nw = dist.length;
  const e = new Float64Array(n * nw);
  const fw = new Float64Array(nw);
  keep.forEach((ri, i) => {
    keep.forEach((cj, j) => (a[i * n + j] = j1[ri * nVar + cj]));
    b[i] = j1[ri * nVar + nFull];
    c[i] = j1[2 * nVar + ri];
    for (let k = 0; k < nw; k++) e[i * nw + k] = j1[ri * nVar + nFull + 1 + k];
  });
  for (let k = 0; k < nw; k++) fw[k] = j1[2 * nVar + nFull + 1 + k];
  const dropped = [0, 1].filter((i) => !keep.includes(i));
  const names = STATE_NAMES[plant.conv.kind];
  const warnings: string[] = [];
  if (disc > STEP_DISCREPANCY_WARN)
    warnings.push(`linearization: Jacobians at steps ${hRel} and ${hRelCheck} (relative) differ by ${(100 * disc).toFixed(2)} %: the averaged model is not smooth at this point (e.g. a ripple valley near zero current or a device at saturation); small-signal results are indicative`);
  // A dropped state stays at its operating value, so its column in the kept rows contributes nothing.
  for (const i of dropped) {
    warnings.push(`linearization: state ${names[i]} is held constant by the model (no dynamics) and is left out`);
  }
  return Object.freeze({
    n,
    stateNames: keep.map((i) => names[i]),
    a, b, c, d: j1[2 * nVar + nFull],
    disturbances: [...dist],
    e, f: fw,
    x0: Float64Array.from(keep.map((i) => x0[i])),
    duty0: u0.duty,
    y0,
    equilibriumResidual: residual,
    stepDiscrepancy: disc,
    stepsRel: [hRel, hRelCheck] as const,
    warnings,
  });
}

/** The averaged plant's states at a steady electrical point (buck: vC = vOut since iL = iLoad). */
export function statesAt(plant: Plant, ep: ElectricalPoint): Float64Array {
  return plant.conv.kind === 'buck' ? Float64Array.of(ep.iMeanA, ep.vOutV) : Float64Array.of(ep.iMeanA, ep.vBusV);
}

/** Inputs of the averaged plant at a steady electrical point with the given junction temperatures. */
export function inputsAt(plant: Plant, ep: ElectricalPoint, tjHsC: number, tjLsC: number): AvgInputs {
  const c = plant.conv;
  return {
    duty: ep.duty,
    fswHz: ep.knobs.fswHz,
    deadTimeS: ep.knobs.deadTimeS,
    vDriveV: ep.knobs.vDriveV,
    tjHsC,
    tjLsC,
    vSourceV: c.kind === 'buck' ? ep.vBusV : c.vdcV,
    loadROhm: c.kind === 'buck' && 'rOhm' in c.load ? c.load.rOhm : NaN,
    loadIA: c.kind === 'buck' && 'iA' in c.load ? c.load.iA : 0,
    backEmfV: c.kind === 'halfBridge' ? c.backEmfV : 0,
  };
}

/**
 * Linearize at a steady electrical point. Refuses a point whose duty is pinned at a limit: the
 * loop does not regulate there, so its small-signal margins mean nothing.
 */
export function linearizeAtPoint(plant: Plant, ep: ElectricalPoint, tjHsC: number, tjLsC: number, opts: LinearizeOptions = {}): LinearPlant {
  if (!ep.regulated)
    throw new LinearizationError(`linearize: the output is not regulated at this point (duty pinned at ${ep.duty.toFixed(3)}); the loop is saturated and has no small-signal margins`);
  return linearizeAveraged(plant, statesAt(plant, ep), inputsAt(plant, ep, tjHsC, tjLsC), opts);
}

/** G(s) = C(sI − A)⁻¹B + D at s = jω: the continuous control-to-output response. */
export function plantResponseAt(lin: LinearPlant, omegaRadS: number): { re: number; im: number } {
  return complexTransfer(lin.n, lin.a, lin.b, lin.c, lin.d, 0, omegaRadS, 1, 0);
}
