/**
 * The thermal network as a linear time-invariant system dT/dt = A·T + B·u (for a given
 * coolant flow), and its exact zero-order-hold discretization for the simulator.
 *
 * Input vector u = [deviceLossW[0..N−1], sinkExtraW, inletC, ambientC].
 */

import { requireNonNegative } from './checks.ts';
import { symmetricEigen } from './symmetricEigen.ts';
import type { ThermalInputs, ThermalNetwork } from './network.ts';

export interface ThermalInputIndex {
  /** Index of device 0's loss; device d is at deviceLossW + d. */
  readonly deviceLossW: number;
  readonly sinkExtraW: number;
  readonly inletC: number;
  readonly ambientC: number;
  readonly nInputs: number;
}

export function thermalInputIndex(net: ThermalNetwork): ThermalInputIndex {
  const n = net.nDevices;
  return Object.freeze({ deviceLossW: 0, sinkExtraW: n, inletC: n + 1, ambientC: n + 2, nInputs: n + 3 });
}

/** Packs ThermalInputs into u (length nDevices + 3), no allocation. Flow is not in u: it sets A. */
export function thermalInputVector(net: ThermalNetwork, inputs: ThermalInputs, out: Float64Array): void {
  const n = net.nDevices;
  if (out.length !== n + 3) throw new Error(`out: must have length nDevices + 3 = ${n + 3}, got ${out.length}`);
  if (inputs.deviceLossW.length !== n)
    throw new Error(`inputs.deviceLossW: must have one entry per device (${n}), got ${inputs.deviceLossW.length}`);
  for (let d = 0; d < n; d++) out[d] = inputs.deviceLossW[d];
  out[n] = inputs.sinkExtraW;
  out[n + 1] = inputs.inletC;
  out[n + 2] = inputs.ambientC;
}

/**
 * Nodal form C·dT/dt = −G·T + B0·u: G (n×n, W/K) is the symmetric conductance matrix including
 * the boundary conductances (heatsink→ambient, coolant→inlet stream ṁ·cp); B0 (n×m) maps u to
 * injected heat (1 for powers, the boundary conductance for boundary temperatures).
 */
export interface ThermalConductanceSystem {
  readonly nNodes: number;
  readonly nInputs: number;
  readonly gWPerK: Float64Array;
  readonly b0: Float64Array;
}

export function thermalConductanceSystem(net: ThermalNetwork, flowKgPerS: number): ThermalConductanceSystem {
  requireNonNegative(flowKgPerS, 'flowKgPerS');
  const n = net.nNodes;
  const idx = thermalInputIndex(net);
  const m = idx.nInputs;
  const g = new Float64Array(n * n);
  const b0 = new Float64Array(n * m);
  for (let e = 0; e < net.edgeGWPerK.length; e++) {
    const i = net.edgeFrom[e];
    const j = net.edgeTo[e];
    const ge = net.edgeGWPerK[e];
    g[i * n + i] += ge;
    g[j * n + j] += ge;
    g[i * n + j] -= ge;
    g[j * n + i] -= ge;
  }
  const { junction, heatsink, coolant } = net.layout;
  for (let d = 0; d < net.nDevices; d++) b0[junction[d] * m + idx.deviceLossW + d] = 1;
  b0[heatsink * m + idx.sinkExtraW] = 1;
  g[heatsink * n + heatsink] += net.gSinkAmbientWPerK;
  b0[heatsink * m + idx.ambientC] = net.gSinkAmbientWPerK;
  const gStream = flowKgPerS * net.coolantCpJPerKgK;
  g[coolant * n + coolant] += gStream;
  b0[coolant * m + idx.inletC] = gStream;
  return { nNodes: n, nInputs: m, gWPerK: g, b0 };
}

export interface ThermalSystemMatrices {
  readonly nNodes: number;
  readonly nInputs: number;
  /** nNodes×nNodes row-major, 1/s. */
  readonly a: Float64Array;
  /** nNodes×nInputs row-major; K/J for power inputs, 1/s for temperature inputs. */
  readonly b: Float64Array;
}

/** A = −C⁻¹·G(ṁ), B = C⁻¹·B0(ṁ) for the given flow. */
export function thermalSystemMatrices(net: ThermalNetwork, flowKgPerS: number): ThermalSystemMatrices {
  const { nNodes: n, nInputs: m, gWPerK, b0 } = thermalConductanceSystem(net, flowKgPerS);
  const a = new Float64Array(n * n);
  const b = new Float64Array(n * m);
  for (let i = 0; i < n; i++) {
    const inv = net.invCKPerJ[i];
    for (let j = 0; j < n; j++) a[i * n + j] = -gWPerK[i * n + j] * inv;
    for (let j = 0; j < m; j++) b[i * m + j] = b0[i * m + j] * inv;
  }
  return Object.freeze({ nNodes: n, nInputs: m, a, b });
}

export interface ThermalDiscrete {
  readonly nNodes: number;
  readonly nInputs: number;
  readonly dtS: number;
  readonly flowKgPerS: number;
  /** e^(A·dt), nNodes×nNodes row-major. */
  readonly ad: Float64Array;
  /** ∫0^dt e^(A·τ)dτ·B, nNodes×nInputs row-major. */
  readonly bd: Float64Array;
}

/**
 * Exact ZOH discretization T[k+1] = Ad·T[k] + Bd·u[k], valid for inputs held constant over
 * each step. Flow changes A, so rediscretize (or cache per flow) when the flow changes.
 *
 * Modal (spectral) form: with D = diag(√C), M = D⁻¹·G·D⁻¹ = Q·diag(μ)·Qᵀ is symmetric
 * positive semi-definite, A = −D⁻¹·M·D, so
 *   Ad = D⁻¹·Q·diag(e^(−μk·dt))·Qᵀ·D,   Bd = D⁻¹·Q·diag(φk)·Qᵀ·D⁻¹·B0,   φk = (1 − e^(−μk·dt))/μk
 * (φk = dt for μk = 0, e.g. an insulated network). Why not Padé scaling-and-squaring: the
 * junction stages are ~10⁷× faster than the coolant, so the squaring count is set by modes that
 * have long decayed while its error (∝ 2^s·eps) lands on the slow ones: on a stiff test network
 * it was 1.6e-8 K off the steady state after convergence, this form ≈2e-14 K. (Van Loan's augmented-matrix identity gives the same Bd.)
 */
export function discretizeThermal(net: ThermalNetwork, flowKgPerS: number, dtS: number): ThermalDiscrete {
  if (typeof dtS !== 'number' || !Number.isFinite(dtS) || dtS <= 0) throw new Error(`dtS: must be a finite number > 0, got ${dtS}`);
  const { nNodes: n, nInputs: m, gWPerK, b0 } = thermalConductanceSystem(net, flowKgPerS);
  const sqrtC = net.cJPerK.map(Math.sqrt);
  const sym = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) sym[i * n + j] = gWPerK[i * n + j] / (sqrtC[i] * sqrtC[j]);
  const { values, vectors: q } = symmetricEigen(sym, n);
  const decay = new Float64Array(n);
  const phi = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    // M is PSD by construction; a rounding-level negative μ is a zero mode.
    const mu = Math.max(values[k], 0);
    decay[k] = Math.exp(-mu * dtS);
    phi[k] = mu > 0 ? -Math.expm1(-mu * dtS) / mu : dtS;
  }
  const ad = new Float64Array(n * n);
  for (let i = 0; i < n; i++)
    for (let j = 0; j < n; j++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += q[i * n + k] * decay[k] * q[j * n + k];
      ad[i * n + j] = (s * sqrtC[j]) / sqrtC[i];
    }
  const w = new Float64Array(n * m); // diag(φ)·Qᵀ·D⁻¹·B0
  for (let k = 0; k < n; k++)
    for (let j = 0; j < m; j++) {
      let s = 0;
      for (let r = 0; r < n; r++) s += (q[r * n + k] * b0[r * m + j]) / sqrtC[r];
      w[k * m + j] = phi[k] * s;
    }
  const bd = new Float64Array(n * m);
  for (let i = 0; i < n; i++)
    for (let j = 0; j < m; j++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += q[i * n + k] * w[k * m + j];
      bd[i * m + j] = s / sqrtC[i];
    }
  return Object.freeze({ nNodes: n, nInputs: m, dtS, flowKgPerS, ad, bd });
}

/** out = Ad·tempC + Bd·u, no allocation. `out` must not overlap `tempC`. */
export function stepThermalDiscrete(disc: ThermalDiscrete, tempC: Float64Array, u: ArrayLike<number>, out: Float64Array): void {
  const n = disc.nNodes;
  const m = disc.nInputs;
  if (tempC.length !== n) throw new Error(`tempC: must have length nNodes = ${n}, got ${tempC.length}`);
  if (out.length !== n) throw new Error(`out: must have length nNodes = ${n}, got ${out.length}`);
  if (u.length !== m) throw new Error(`u: must have length nInputs = ${m}, got ${u.length}`);
  if (
    out.buffer === tempC.buffer &&
    out.byteOffset < tempC.byteOffset + tempC.byteLength &&
    tempC.byteOffset < out.byteOffset + out.byteLength
  )
    throw new Error('out: must not overlap tempC (use two buffers and swap)');
  const { ad, bd } = disc;
  for (let i = 0; i < n; i++) {
    let s = 0;
    for (let j = 0; j < n; j++) s += ad[i * n + j] * tempC[j];
    for (let j = 0; j < m; j++) s += bd[i * m + j] * u[j];
    out[i] = s;
  }
}
