/**
 * Digital PI controller in velocity (incremental) form, as run in a DSP inner
 * loop of a power converter (output voltage of the buck, load current of the
 * half-bridge leg), plus the computation-delay line between the controller and
 * the PWM.
 *
 * Difference equation (unsaturated):
 *
 *     x[k] = x[k−1] + b0·e[k] + b1·e[k−1],      u[k] = sat(x[k] + uff[k])
 *
 * where x is the stored feedback state, uff an optional feed-forward term and
 * sat() clips to [uMin, uMax]. `piCoefficients` returns exactly the (b0, b1)
 * used here, so C(z) = (b0 + b1·z⁻¹)/(1 − z⁻¹) is the controller transfer
 * function seen by a stability analysis whenever the output is not saturated.
 *
 * The stored state always satisfies x[k] = kp·e[k] + I[k], i.e. the velocity
 * form is equivalent to the positional form with integral state I; the
 * anti-windup schemes act only on the integral part of each increment.
 */
import {
  failCheck,
  requireFinite,
  requireInRange,
  requireInteger,
  requireOneOf,
  requirePositive,
} from './check.ts';

export type PiBasis = 'continuous' | 'perSample';
export type PiAntiWindup = 'clamp' | 'backCalc';

export interface PiConfig {
  /**
   * 'continuous': kp, ki describe C(s) = kp + ki/s (u = kp·e + ki∫e dt, ki in
   * u per unit error per second); discretized with Tustin at the actual sample
   * period, so (b0, b1) are rescaled whenever the sample period changes.
   *
   * 'perSample': kp and ki (= kiPerSample) are fixed per-sample coefficients,
   * u[k] = u[k−1] + kp·(e[k] − e[k−1]) + kiPerSample·e[k]. Hazard: the
   * equivalent continuous integral gain is kiPerSample/Ts, so raising the
   * sample rate raises the effective integral gain (see `piEquivalentKi`).
   */
  readonly basis: PiBasis;
  /** Proportional gain, u per unit error (same meaning in both bases). */
  readonly kp: number;
  /** Integral gain: per second ('continuous') or per sample ('perSample'). */
  readonly ki: number;
  /** 'clamp' = conditional integration; 'backCalc' = back-calculation (tracking). */
  readonly antiWindup: PiAntiWindup;
  /**
   * Back-calculation gain per sample, kb ∈ (0, 1]; required for 'backCalc'.
   * Relates to the tracking time constant Tt of Åström & Rundqwist by kb = Ts/Tt
   * (it is a per-sample gain: it is NOT rescaled when the sample period changes).
   * kb = 1 makes the stored state track the saturated output in one sample.
   */
  readonly backCalcGain?: number;
  /** Output limits (e.g. duty 0…0.95), uMin < uMax. */
  readonly uMin: number;
  readonly uMax: number;
}

export interface PiCoefficients {
  readonly b0: number;
  readonly b1: number;
}

/** Mutable controller state: plain numeric fields, no allocation per step. */
export interface PiState {
  /** Stored feedback state x[k−1] (unsaturated, without feed-forward). */
  x: number;
  /** Previous error e[k−1]. */
  errorPrev: number;
  /** Last saturated output u[k−1]. */
  output: number;
  /** Last step: +1 if the unsaturated output exceeded uMax (output held at uMax), −1 likewise at uMin, 0 if not saturated. */
  saturation: number;
}

const BASES: readonly PiBasis[] = ['continuous', 'perSample'];
const ANTI_WINDUPS: readonly PiAntiWindup[] = ['clamp', 'backCalc'];

/** Throws unless `cfg` is a usable PI configuration. */
export function validatePiConfig(cfg: PiConfig): void {
  if (cfg === null || typeof cfg !== 'object') failCheck('pi', 'must be a config object', cfg);
  requireOneOf('pi.basis', cfg.basis, BASES);
  requireFinite('pi.kp', cfg.kp);
  requireFinite('pi.ki', cfg.ki);
  requireOneOf('pi.antiWindup', cfg.antiWindup, ANTI_WINDUPS);
  requireFinite('pi.uMin', cfg.uMin);
  requireFinite('pi.uMax', cfg.uMax);
  if (!(cfg.uMax > cfg.uMin)) failCheck('pi.uMax', `must be > pi.uMin (${cfg.uMin})`, cfg.uMax);
  if (cfg.antiWindup === 'backCalc') {
    if (cfg.backCalcGain === undefined) {
      failCheck('pi.backCalcGain', "must be given in (0, 1] when antiWindup is 'backCalc'", undefined);
    }
    requireInRange('pi.backCalcGain', cfg.backCalcGain, 0, 1);
  } else if (cfg.backCalcGain !== undefined) {
    requireInRange('pi.backCalcGain', cfg.backCalcGain, 0, 1);
  }
}

/**
 * Coefficients of C(z) = (b0 + b1·z⁻¹)/(1 − z⁻¹), i.e. of
 * u[k] = u[k−1] + b0·e[k] + b1·e[k−1], at sample period tsS.
 *
 * continuous basis — Tustin (bilinear, s → (2/Ts)·(z−1)/(z+1)) discretization
 * of C(s) = Kp + Ki/s (Buso & Mattavelli, Digital Control in Power Electronics,
 * Morgan & Claypool 2006):  b0 = Kp + Ki·Ts/2,  b1 = −Kp + Ki·Ts/2.
 *
 * perSample basis — fixed per-sample gains, backward-rectangular integral:
 * b0 = kp + kiPerSample,  b1 = −kp  (independent of tsS).
 *
 * The integral coefficient per sample is b0 + b1 (= Ki·Ts, resp. kiPerSample).
 */
export function piCoefficients(cfg: PiConfig, tsS: number): PiCoefficients {
  validatePiConfig(cfg);
  requirePositive('pi.tsS', tsS);
  if (cfg.basis === 'continuous') {
    const half = (cfg.ki * tsS) / 2;
    return { b0: cfg.kp + half, b1: -cfg.kp + half };
  }
  return { b0: cfg.kp + cfg.ki, b1: -cfg.kp };
}

/**
 * Equivalent continuous integral gain (per second) of a coefficient pair run
 * at tsS: Ki,eq = (b0 + b1)/Ts. Equals cfg.ki for the continuous basis at any
 * Ts; equals kiPerSample/Ts for the perSample basis (doubles when the sample
 * rate doubles).
 */
export function piEquivalentKi(coeffs: PiCoefficients, tsS: number): number {
  requireFinite('pi.b0', coeffs.b0);
  requireFinite('pi.b1', coeffs.b1);
  requirePositive('pi.tsS', tsS);
  return (coeffs.b0 + coeffs.b1) / tsS;
}

/** A fresh state holding output u0 with zero previous error. */
export function createPiState(u0 = 0): PiState {
  const state: PiState = { x: 0, errorPrev: 0, output: 0, saturation: 0 };
  piReset(state, u0);
  return state;
}

/**
 * Bumpless (re)start: after the reset the controller outputs u0 (when
 * u0 is within limits) for as long as the error stays zero. The stored state
 * becomes u0 − feedForward and the previous error 0, so a non-zero first error
 * produces the usual proportional step kp·e on top of u0.
 */
export function piReset(state: PiState, u0: number, feedForward = 0): void {
  requireFinite('pi.reset.u0', u0);
  requireFinite('pi.reset.feedForward', feedForward);
  state.x = u0 - feedForward;
  state.errorPrev = 0;
  state.output = u0;
  state.saturation = 0;
}

/**
 * One controller update; returns the saturated output u[k] ∈ [uMin, uMax].
 *
 * Unsaturated: x[k] = x[k−1] + b0·e[k] + b1·e[k−1], u[k] = x[k] + feedForward.
 *
 * 'clamp' — conditional integration (Åström & Hägglund, Advanced PID Control,
 * ISA 2006, integrator windup): the increment is split into its proportional
 * part ΔP = kp·(e[k] − e[k−1]) and integral part ΔI = b0·e[k] + b1·e[k−1] − ΔP.
 * When x + ΔP + ΔI + feedForward would exceed uMax with ΔI > 0 (or fall below
 * uMin with ΔI < 0) the integral part is not integrated past the limit: it is
 * taken only as far as needed to bring x + feedForward to the limit, and not at
 * all if x[k−1] + ΔP is already beyond it. (Dropping ΔI entirely would let the
 * output stall up to one increment short of the limit under a persistent error.)
 *
 * 'backCalc' — back-calculation (Åström & Rundqwist, "Integrator windup and how
 * to avoid it", ACC 1989): after the unsaturated update v = x[k−1] + Δu + uff,
 * the stored state is pulled toward the saturated output,
 * x[k] = x[k−1] + Δu + kb·(sat(v) − v), kb = backCalcGain per sample. With a
 * constant error e held in saturation, x + uff settles at the limit plus
 * (b0 + b1)·e·(1 − kb)/kb (the tracking offset), instead of growing without bound.
 *
 * `cfg` and `coeffs` are expected to come from `piCoefficients` (which
 * validates cfg); per call only the numeric inputs are checked.
 */
export function piStep(
  cfg: PiConfig,
  coeffs: PiCoefficients,
  state: PiState,
  errorValue: number,
  feedForward = 0,
): number {
  if (!Number.isFinite(errorValue)) failCheck('pi.step.errorValue', 'must be finite', errorValue);
  if (!Number.isFinite(feedForward)) failCheck('pi.step.feedForward', 'must be finite', feedForward);
  const b0 = coeffs.b0;
  const b1 = coeffs.b1;
  if (!Number.isFinite(b0) || !Number.isFinite(b1)) {
    failCheck('pi.step.coeffs', 'must have finite b0 and b1', `b0=${b0}, b1=${b1}`);
  }
  const uMin = cfg.uMin;
  const uMax = cfg.uMax;
  const ePrev = state.errorPrev;
  const du = b0 * errorValue + b1 * ePrev;
  const xCandidate = state.x + du;
  const vCandidate = xCandidate + feedForward;

  let x = xCandidate;
  let u = vCandidate;
  let saturation = 0;
  if (vCandidate > uMax) saturation = 1;
  else if (vCandidate < uMin) saturation = -1;

  if (saturation !== 0) {
    const limit = saturation > 0 ? uMax : uMin;
    u = limit;
    if (cfg.antiWindup === 'clamp') {
      const dP = cfg.kp * (errorValue - ePrev);
      const dI = du - dP;
      if (dI * saturation > 0) {
        // The integral part pushes further out: integrate it only up to the
        // limit, never beyond (none of it if the proportional part alone is
        // already past the limit).
        const xHeld = state.x + dP;
        const xAtLimit = limit - feedForward;
        x = (xHeld - xAtLimit) * saturation < 0 ? xAtLimit : xHeld;
      }
    } else {
      x = xCandidate + (cfg.backCalcGain as number) * (limit - vCandidate);
    }
  }

  state.x = x;
  state.errorPrev = errorValue;
  state.output = u;
  state.saturation = saturation;
  return u;
}

/**
 * Convenience bundle of config, coefficients and state. `setSamplePeriod`
 * recomputes (b0, b1) for the new period; the stored state is kept, so the
 * change is bumpless (the velocity-form state does not depend on Ts).
 */
export class PiController {
  readonly cfg: PiConfig;
  readonly state: PiState;
  private coeffs: PiCoefficients;
  private tsS: number;

  constructor(cfg: PiConfig, tsS: number, u0 = 0) {
    this.coeffs = piCoefficients(cfg, tsS);
    this.cfg = cfg;
    this.tsS = tsS;
    this.state = createPiState(u0);
  }

  get coefficients(): PiCoefficients {
    return this.coeffs;
  }

  get samplePeriodS(): number {
    return this.tsS;
  }

  setSamplePeriod(tsS: number): void {
    this.coeffs = piCoefficients(this.cfg, tsS);
    this.tsS = tsS;
  }

  step(errorValue: number, feedForward = 0): number {
    return piStep(this.cfg, this.coeffs, this.state, errorValue, feedForward);
  }

  reset(u0: number, feedForward = 0): void {
    piReset(this.state, u0, feedForward);
  }
}

/**
 * Computation delay of N whole samples between the controller output and the
 * PWM: the duty computed at sample k is applied at the PWM update of sample
 * k + N (N = 1 is the usual "compute in this period, load the compare register
 * for the next" arrangement; N = 0 is an ideal, delay-free loop). The PWM then
 * holds the applied duty for one full period — a zero-order hold — which, in a
 * frequency-domain model, adds the ZOH's Ts/2 equivalent delay on top of the
 * N·Ts modeled here.
 *
 * Ring buffer in a Float64Array; push() allocates nothing.
 */
export class DelayLine {
  readonly nSamples: number;
  private readonly buffer: Float64Array;
  private index = 0;

  /**
   * @param nSamples delay N, an integer ≥ 0
   * @param initialValue what the line outputs for the first N pushes
   */
  constructor(nSamples: number, initialValue = 0) {
    requireInteger('delayLine.nSamples', nSamples, 0);
    requireFinite('delayLine.initialValue', initialValue);
    this.nSamples = nSamples;
    this.buffer = new Float64Array(Math.max(nSamples, 1));
    this.buffer.fill(initialValue);
  }

  /** Enter the value computed now; returns the value entered N pushes ago (or the initial value). */
  push(value: number): number {
    if (!Number.isFinite(value)) failCheck('delayLine.push.value', 'must be finite', value);
    if (this.nSamples === 0) return value;
    const out = this.buffer[this.index];
    this.buffer[this.index] = value;
    this.index = this.index + 1 === this.nSamples ? 0 : this.index + 1;
    return out;
  }

  /** The value the next push() will return; NaN for N = 0, where nothing is held. */
  peek(): number {
    return this.nSamples === 0 ? Number.NaN : this.buffer[this.index];
  }

  /** Fill the line with `value` (e.g. the duty at a bumpless restart). */
  reset(value = 0): void {
    requireFinite('delayLine.reset.value', value);
    this.buffer.fill(value);
    this.index = 0;
  }
}
