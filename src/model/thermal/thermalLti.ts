/**
 * The thermal network as a linear time-invariant system dT/dt = A·T + B·u (for a given
 * coolant flow), and its exact zero-order-hold discretization for the simulator.
 *
 * Input vector u = [deviceLossW[0..N−1], sinkExtraW, inletC, ambientC].
 */

import { requireNonNegative } from './checks.ts';
import { zohDiscretize } from './matrixExponential.ts';
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

export interface ThermalSystemMatrices {
  readonly nNodes: number;
  readonly nInputs: number;
  /** nNodes×nNodes row-major, 1/s. */
  readonly a: Float64Array;
  /** nNodes×nInputs row-major; K/J for power inputs, 1/s for temperature inputs. */
  readonly b: Float64Array;
}

/** A = −C⁻¹·G(ṁ), B = C⁻¹·[injection | ṁ·cp at coolant | g_amb at heatsink] for the given flow. */
export function thermalSystemMatrices(net: ThermalNetwork, flowKgPerS: number): ThermalSystemMatrices {
  requireNonNegative(flowKgPerS, 'flowKgPerS');
  const n = net.nNodes;
  const idx = thermalInputIndex(net);
  const m = idx.nInputs;
  const a = new Float64Array(n * n);
  const b = new Float64Array(n * m);
  for (let e = 0; e < net.edgeGWPerK.length; e++) {
    const i = net.edgeFrom[e];
    const j = net.edgeTo[e];
    const g = net.edgeGWPerK[e];
    a[i * n + i] -= g;
    a[j * n + j] -= g;
    a[i * n + j] += g;
    a[j * n + i] += g;
  }
  const { junction, heatsink, coolant } = net.layout;
  for (let d = 0; d < net.nDevices; d++) b[junction[d] * m + idx.deviceLossW + d] = 1;
  b[heatsink * m + idx.sinkExtraW] = 1;
  a[heatsink * n + heatsink] -= net.gSinkAmbientWPerK;
  b[heatsink * m + idx.ambientC] = net.gSinkAmbientWPerK;
  const gStream = flowKgPerS * net.coolantCpJPerKgK;
  a[coolant * n + coolant] -= gStream;
  b[coolant * m + idx.inletC] = gStream;
  for (let i = 0; i < n; i++) {
    const inv = net.invCKPerJ[i];
    for (let j = 0; j < n; j++) a[i * n + j] *= inv;
    for (let j = 0; j < m; j++) b[i * m + j] *= inv;
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
 */
export function discretizeThermal(net: ThermalNetwork, flowKgPerS: number, dtS: number): ThermalDiscrete {
  const sys = thermalSystemMatrices(net, flowKgPerS);
  const { ad, bd } = zohDiscretize(sys.a, sys.b, sys.nNodes, sys.nInputs, dtS);
  return Object.freeze({ nNodes: sys.nNodes, nInputs: sys.nInputs, dtS, flowKgPerS, ad, bd });
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
