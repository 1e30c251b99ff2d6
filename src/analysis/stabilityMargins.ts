/**
 * Gain and phase margins of a loop gain L(jω) given as a function, for negative feedback.
 *
 * The response is sampled on a log grid and refined wherever the phase of L (or of 1 + L, for the
 * Nyquist count) moves more than a few degrees between neighbours, so a sharp resonance cannot
 * hide between grid points and the phase unwraps without ambiguity. Crossings are then solved
 * to near machine precision on log ω.
 *
 *   phase margin PM = min over gain crossovers (|L| = 1) of 180° + ∠L (∠L unwrapped from the
 *                     lowest frequency, so a crossover at −400° reads −220°, not +140°);
 *   gain margin GM  = min over phase crossovers (∠L = −180° + k·360°) of −20·log10|L| dB.
 *
 * "No crossover" is a value, not an error: PM = Infinity with crossoverHz NaN; GM = Infinity
 * with phaseCrossoverHz NaN (as the control-systems libraries for Python report it).
 */
import { type Complex, wrapDeg } from './loopGain.ts';

export interface MarginSearchOptions {
  readonly omegaMinRadS: number;
  readonly omegaMaxRadS: number;
  /** L is real at omegaMax (a discrete loop at the Nyquist frequency): a phase of exactly −180° there is a crossing. */
  readonly realAtMax?: boolean;
  /** Initial grid density (default 30 per decade). */
  readonly pointsPerDecade?: number;
  /** Refine an interval whose phase (of L, and of 1 + L when `nyquist`) changes more than this (default 15°). */
  readonly maxPhaseStepDeg?: number;
  /** Also track arg(1 + L) for a Nyquist encirclement count (default false). */
  readonly nyquist?: boolean;
}

export interface StabilityMargins {
  /** Gain crossover that sets the phase margin (NaN: no crossover). */
  readonly crossoverHz: number;
  readonly pmDeg: number;
  /** Phase crossover that sets the gain margin (NaN: none). */
  readonly phaseCrossoverHz: number;
  readonly gmDb: number;
  /** Phase margin expressed as the extra loop delay that would use it up (Infinity: none). */
  readonly delayMarginS: number;
  readonly gainCrossingsHz: readonly number[];
  readonly phaseCrossingsHz: readonly number[];
}

export interface SampledResponse {
  readonly omegaRadS: number[];
  readonly re: number[];
  readonly im: number[];
  /** log10 |L|. */
  readonly logMag: number[];
  /** Unwrapped phase of L in degrees. */
  readonly phaseDeg: number[];
  /** Unwrapped arg(1 + L) in degrees (only with `nyquist`). */
  readonly argOnePlusDeg: number[];
}

const DEG = 180 / Math.PI;
const toHz = (omegaRadS: number): number => omegaRadS / (2 * Math.PI);

type LoopFn = (omegaRadS: number) => Complex;

function evalChecked(fn: LoopFn, w: number): Complex {
  const v = fn(w);
  if (!Number.isFinite(v.re) || !Number.isFinite(v.im)) throw new RangeError(`margins: loop gain is not finite at ω = ${w} rad/s`);
  return v;
}

/** Append a sample; dPh and d1p are the phase steps of L and 1 + L from the previous sample (degrees). */
function pushSample(out: SampledResponse, w: number, re: number, im: number, dPh: number, d1p: number): void {
  const n = out.omegaRadS.length;
  out.omegaRadS.push(w);
  out.re.push(re);
  out.im.push(im);
  out.logMag.push(0.5 * Math.log10(re * re + im * im));
  out.phaseDeg.push(n === 0 ? Math.atan2(im, re) * DEG : out.phaseDeg[n - 1] + dPh);
  out.argOnePlusDeg.push(n === 0 ? Math.atan2(im, 1 + re) * DEG : out.argOnePlusDeg[n - 1] + d1p);
}

/** Angle of b/a in degrees, in (−180, 180]: the phase step between two samples with one atan2. */
function stepDeg(ar: number, ai: number, br: number, bi: number): number {
  return Math.atan2(bi * ar - br * ai, br * ar + bi * ai) * DEG;
}

/** Sample L adaptively between omegaMin and omegaMax (both included). */
export function sampleResponse(fn: LoopFn, opts: MarginSearchOptions): SampledResponse {
  const { omegaMinRadS: wMin, omegaMaxRadS: wMax } = opts;
  if (!(wMin > 0 && wMax > wMin) || !Number.isFinite(wMax)) throw new RangeError(`margins: need 0 < omegaMin < omegaMax, got ${wMin}, ${wMax}`);
  const perDecade = opts.pointsPerDecade ?? 30;
  const maxStep = opts.maxPhaseStepDeg ?? 15;
  const track1p = opts.nyquist ?? false;
  const nInit = Math.max(2, Math.ceil(Math.log10(wMax / wMin) * perDecade) + 1);
  const out: SampledResponse = { omegaRadS: [], re: [], im: [], logMag: [], phaseDeg: [], argOnePlusDeg: [] };
  const ratio = Math.pow(wMax / wMin, 1 / (nInit - 1));
  let v = evalChecked(fn, wMin);
  pushSample(out, wMin, v.re, v.im, 0, 0);
  // Pending right ends of the interval being refined (a stack; the left end is the last sample).
  const stW: number[] = [];
  const stRe: number[] = [];
  const stIm: number[] = [];
  let ar = v.re;
  let ai = v.im;
  let wa = wMin;
  for (let i = 1; i < nInit; i++) {
    const w = i === nInit - 1 ? wMax : wMin * Math.pow(ratio, i);
    v = evalChecked(fn, w);
    stW.push(w); stRe.push(v.re); stIm.push(v.im);
    while (stW.length > 0) {
      const k = stW.length - 1;
      const wb = stW[k], rb = stRe[k], ib = stIm[k];
      const dPh = stepDeg(ar, ai, rb, ib);
      const d1p = stepDeg(1 + ar, ai, 1 + rb, ib);
      // |b|²/|a|² outside [0.1, 10]: a magnitude step of more than half a decade.
      const m2 = (rb * rb + ib * ib) / (ar * ar + ai * ai);
      if ((Math.abs(dPh) > maxStep || (track1p && Math.abs(d1p) > maxStep) || m2 > 10 || m2 < 0.1) && wb / wa > 1 + 1e-9) {
        const wm = Math.sqrt(wa * wb);
        const vm = evalChecked(fn, wm);
        stW.push(wm); stRe.push(vm.re); stIm.push(vm.im);
        continue;
      }
      pushSample(out, wb, rb, ib, dPh, d1p);
      ar = rb; ai = ib; wa = wb;
      stW.pop(); stRe.pop(); stIm.pop();
    }
  }
  return out;
}

/** log10|L| at ω = e^t. */
function logMagAt(fn: LoopFn, t: number): number {
  const v = fn(Math.exp(t));
  return 0.5 * Math.log10(v.re * v.re + v.im * v.im);
}

/** Unwrapped phase at ω = e^t, continued from the reference phase pRef of a nearby sample (< 180° away). */
function phaseNear(fn: LoopFn, t: number, pRef: number): number {
  const v = fn(Math.exp(t));
  return pRef + wrapDeg(Math.atan2(v.im, v.re) * DEG - pRef);
}

/** Root of g(t) − target on [ta, tb] with a sign change: Illinois-modified regula falsi. */
function solveBracket(fn: LoopFn, kind: 'mag' | 'phase', pRef: number, target: number, ta: number, tb: number, ga: number, gb: number): number {
  if (ga === 0) return ta;
  if (gb === 0) return tb;
  let side = 0;
  for (let it = 0; it < 80; it++) {
    const t = (ta * gb - tb * ga) / (gb - ga);
    const gt = (kind === 'mag' ? logMagAt(fn, t) : phaseNear(fn, t, pRef)) - target;
    if (gt === 0 || Math.abs(tb - ta) < 1e-13 * Math.max(1, Math.abs(t))) return t;
    if ((gt > 0) === (gb > 0)) {
      tb = t; gb = gt;
      if (side === -1) ga /= 2;
      side = -1;
    } else {
      ta = t; ga = gt;
      if (side === 1) gb /= 2;
      side = 1;
    }
  }
  return (ta + tb) / 2;
}

/** Margins from an adaptive sampling of L (see sampleResponse). */
export function marginsFromSamples(fn: LoopFn, s: SampledResponse, opts: MarginSearchOptions): StabilityMargins {
  const w = s.omegaRadS;
  const n = w.length;
  const gainW: number[] = [];
  const gainPm: number[] = [];
  const phaseW: number[] = [];
  const phaseGm: number[] = [];
  for (let i = 1; i < n; i++) {
    const ma = s.logMag[i - 1];
    const mb = s.logMag[i];
    const pa = s.phaseDeg[i - 1];
    const pb = s.phaseDeg[i];
    const ta = Math.log(w[i - 1]);
    const tb = Math.log(w[i]);
    if ((ma > 0) !== (mb > 0) || mb === 0) {
      const t = solveBracket(fn, 'mag', 0, 0, ta, tb, ma, mb);
      gainW.push(Math.exp(t));
      gainPm.push(180 + phaseNear(fn, t, pa));
    }
    // Odd multiples of 180° crossed in this interval (−180° + 360°·k).
    const ka = Math.floor((pa + 180) / 360);
    const kb = Math.floor((pb + 180) / 360);
    if (ka !== kb) {
      const target = -180 + 360 * Math.max(ka, kb);
      const t = solveBracket(fn, 'phase', pa, target, ta, tb, pa - target, pb - target);
      phaseW.push(Math.exp(t));
      phaseGm.push(-20 * logMagAt(fn, t));
    }
  }
  if (opts.realAtMax && n > 0) {
    const pEnd = s.phaseDeg[n - 1];
    const k = Math.round((pEnd + 180) / 360);
    const wEnd = w[n - 1];
    if (Math.abs(pEnd - (-180 + 360 * k)) < 1e-6 && !phaseW.some((x) => Math.abs(x - wEnd) <= 1e-7 * wEnd)) {
      phaseW.push(wEnd);
      phaseGm.push(-20 * s.logMag[n - 1]);
    }
  }
  let pm = Infinity;
  let wc = NaN;
  for (let i = 0; i < gainW.length; i++) if (gainPm[i] < pm) { pm = gainPm[i]; wc = gainW[i]; }
  let gm = Infinity;
  let wp = NaN;
  for (let i = 0; i < phaseW.length; i++) if (phaseGm[i] < gm) { gm = phaseGm[i]; wp = phaseW[i]; }
  return {
    crossoverHz: toHz(wc),
    pmDeg: pm,
    phaseCrossoverHz: toHz(wp),
    gmDb: gm,
    delayMarginS: Number.isFinite(pm) ? (pm > 0 ? pm / DEG / wc : 0) : Infinity,
    gainCrossingsHz: gainW.map(toHz),
    phaseCrossingsHz: phaseW.map(toHz),
  };
}

/** Sample and read the margins in one call. */
export function stabilityMargins(fn: (omegaRadS: number) => Complex, opts: MarginSearchOptions): StabilityMargins {
  return marginsFromSamples(fn, sampleResponse(fn, opts), opts);
}
