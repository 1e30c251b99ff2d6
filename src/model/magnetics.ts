/** Inductor losses: winding copper with DCR(T) and ferrite core loss by the iGSE. */

export interface CoreParams {
  readonly kiSI: number;
  readonly alpha: number;
  readonly beta: number;
  readonly aeM2: number;
  readonly turns: number;
  readonly volumeM3: number;
  /** Saturation flux density; the model does not follow the core past it, it flags it. */
  readonly bSatT?: number;
}

/** Peak flux density B = L·i_pk/(N·Ae) (Faraday, linear core). */
export function peakFluxT(core: CoreParams, lH: number, iPeakA: number): number {
  return (lH * Math.abs(iPeakA)) / (core.turns * core.aeM2);
}

/** Copper DCR(T) = DCR20·(1 + 0.00393·(T − 20)) (common practice, annealed copper coefficient). */
export function dcrOhm(dcr20Ohm: number, tempC: number): number {
  return dcr20Ohm * (1 + 0.00393 * (tempC - 20));
}

/**
 * iGSE loss density for triangular flux with rise fraction D (Venkatachalam, Sullivan, Abdallah,
 * Tacca, IEEE COMPEL 2002; closed form derived for a two-segment waveform):
 *   Pv = k_i·ΔB^β·f^α·[D^(1−α) + (1−D)^(1−α)],  ΔB peak-to-peak (T), f (Hz), Pv (W/m³).
 */
export function igseTriangularWPerM3(core: Pick<CoreParams, 'kiSI' | 'alpha' | 'beta'>, deltaBT: number, freqHz: number, riseFraction: number): number {
  if (deltaBT <= 0) return 0;
  const d = Math.min(Math.max(riseFraction, 1e-6), 1 - 1e-6);
  const shape = Math.pow(d, 1 - core.alpha) + Math.pow(1 - d, 1 - core.alpha);
  return core.kiSI * Math.pow(deltaBT, core.beta) * Math.pow(freqHz, core.alpha) * shape;
}

/** Peak-to-peak flux density swing ΔB = L·Δi/(N·Ae) (Faraday's law for the ripple). */
export function deltaBT(core: CoreParams, lH: number, ripplePpA: number): number {
  return (lH * ripplePpA) / (core.turns * core.aeM2);
}

export function coreLossW(core: CoreParams | undefined, lH: number, ripplePpA: number, fswHz: number, riseFraction: number): number {
  if (!core) return 0;
  return igseTriangularWPerM3(core, deltaBT(core, lH, ripplePpA), fswHz, riseFraction) * core.volumeM3;
}
