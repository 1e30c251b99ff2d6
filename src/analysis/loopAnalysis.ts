/**
 * Stability of one discrete inner loop, three ways that must agree:
 *  1. margins of L(e^{jωTs}) (crossover, PM, GM) on 0 < ω ≤ π/Ts;
 *  2. closed-loop poles: eigenvalues of the exact discrete closed-loop matrix, stable iff all
 *     |λ| < 1 (this is the verdict);
 *  3. a Nyquist count: with the PI's pole at z = 1 indented around (it counts as inside), the
 *     closed loop has Z = P − W poles outside the unit circle, where P counts open-loop plant poles
 *     outside and W is the winding of 1 + L around 0 along the unit circle (counter-clockwise).
 *     By conjugate symmetry W = (2·Δ∠(1+L)|_{0+}^{π/Ts} − 180°·[integrator]) / 360°, the
 *     integrator's indentation contributing a clockwise half turn at infinity.
 * For the loops here (stable plant, phase falling through −180° once around the LC resonance or
 * the delay) (1) reads stable iff PM > 0 and GM > 0 dB; `marginsAgree` reports whether it does.
 */
import { closedLoopPoles, openLoopPlantPoles, type ClosedLoopPoles } from './closedLoop.ts';
import { type BodeData, type Complex, type DiscreteLoop, loopGainAt, loopGainInto } from './loopGain.ts';
import { type SampledResponse, type StabilityMargins, marginsFromSamples, sampleResponse } from './stabilityMargins.ts';

export interface LoopAnalysis {
  readonly margins: StabilityMargins;
  readonly poles: ClosedLoopPoles;
  /** Verdict from the poles. */
  readonly stable: boolean;
  /** Unstable closed-loop poles according to the Nyquist count. */
  readonly nyquistUnstable: number;
  /** Nyquist count equals the eigenvalue count. */
  readonly nyquistAgrees: boolean;
  /** (PM > 0 and GM > 0 dB) equals the verdict. */
  readonly marginsAgree: boolean;
  readonly warnings: string[];
}

export interface AnalyzeOptions {
  /** Lowest frequency examined, as a fraction of the Nyquist frequency (default 1e-3; extended down by decades until an integrator dominates, |L| > 10). */
  readonly omegaMinFraction?: number;
  readonly pointsPerDecade?: number;
  /** Keep the sampled response (for Bode output). */
  readonly keepSamples?: boolean;
}

/** Lowest frequency: low enough that an integrator dominates (|L| > 10) before the plant acts. */
function omegaMinOf(loop: DiscreteLoop, fraction: number): number {
  let w = fraction * loop.omegaNyquistRadS;
  if (!loop.integrator) return w;
  for (let i = 0; i < 12; i++) {
    const v = loopGainAt(loop, w);
    if (Math.hypot(v.re, v.im) > 10) break;
    w /= 10;
  }
  return w;
}

export function analyzeLoop(loop: DiscreteLoop, opts: AnalyzeOptions = {}): LoopAnalysis & { samples?: SampledResponse } {
  const scratch: Complex = { re: 0, im: 0 };
  const fn = (w: number): Complex => loopGainInto(loop, w, scratch);
  const search = {
    omegaMinRadS: omegaMinOf(loop, opts.omegaMinFraction ?? 1e-3),
    omegaMaxRadS: loop.omegaNyquistRadS,
    realAtMax: true,
    pointsPerDecade: opts.pointsPerDecade ?? 20,
    nyquist: true,
  };
  const s = sampleResponse(fn, search);
  const margins = marginsFromSamples(fn, s, search);
  const poles = closedLoopPoles(loop);
  const open = openLoopPlantPoles(loop);
  const warnings: string[] = [];
  const nS = s.argOnePlusDeg.length;
  const half = s.argOnePlusDeg[nS - 1] - s.argOnePlusDeg[0];
  const windingRaw = (2 * half - (loop.integrator ? 180 : 0)) / 360;
  const winding = Math.round(windingRaw);
  const nyquistUnstable = open.outside - winding;
  const stable = poles.maxAbs < 1;
  const nyquistAgrees = nyquistUnstable === poles.unstableCount;
  if (open.onCircle > 0) warnings.push('the open-loop plant has poles on the unit circle: margins and the Nyquist count are not reliable, the pole verdict is');
  if (!nyquistAgrees && Math.abs(poles.maxAbs - 1) > 1e-9)
    warnings.push(`Nyquist count (${nyquistUnstable} unstable) disagrees with the closed-loop poles (${poles.unstableCount} with |λ| ≥ 1)`);
  const marginsSayStable = margins.pmDeg > 0 && margins.gmDb > 0;
  const marginsAgree = marginsSayStable === stable;
  if (!marginsAgree)
    warnings.push(`margins (PM ${margins.pmDeg.toFixed(1)}°, GM ${margins.gmDb.toFixed(1)} dB) read ${marginsSayStable ? 'stable' : 'unstable'} but the closed-loop poles say ${stable ? 'stable' : 'unstable'} (several crossovers: a conditionally stable loop)`);
  const res: LoopAnalysis & { samples?: SampledResponse } = { margins, poles, stable, nyquistUnstable, nyquistAgrees, marginsAgree, warnings };
  if (opts.keepSamples) res.samples = s;
  return res;
}

/** Bode data of the exact loop from an adaptive sampling (exact unwrap), from fMinHz to Nyquist. */
export function loopBode(loop: DiscreteLoop, fMinHz: number, pointsPerDecade = 60): BodeData {
  const s = sampleResponse((w) => loopGainAt(loop, w), {
    omegaMinRadS: 2 * Math.PI * fMinHz,
    omegaMaxRadS: loop.omegaNyquistRadS,
    pointsPerDecade,
    maxPhaseStepDeg: 5,
  });
  return {
    freqHz: s.omegaRadS.map((w) => w / (2 * Math.PI)),
    magDb: s.logMag.map((m) => 20 * m),
    phaseDeg: s.phaseDeg,
  };
}
