/**
 * Lumped thermal network of a converter: per-device junction–case Cauer ladders, a case–sink
 * interface, one shared heatsink (cold plate) node and one well-mixed coolant node.
 *
 *   junction(1) ─R1─ … ─(Rn + Rcs)─ heatsink ─ rSinkCoolant ─ coolant ⇄ inlet stream (ṁ·cp)
 *                                       └─ rSinkAmbient ─ ambient
 *
 * State: absolute node temperatures in °C. Energy: C_i·dT_i/dt = Σ heat flows into node i.
 */

import { requireFinite, requireNonNegative } from './checks.ts';
import { solveLinear } from './denseLinalg.ts';
import { fosterToCauer, type CauerNetwork } from './foster.ts';
import { thermalConductanceSystem, thermalInputVector } from './thermalLti.ts';
import { validateThermalSpec, type ThermalSpec } from './thermalSpec.ts';

export type { DeviceThermalSpec, JunctionCaseSpec, ThermalSpec } from './thermalSpec.ts';
export {
  discretizeThermal,
  stepThermalDiscrete,
  thermalInputIndex,
  thermalConductanceSystem,
  thermalInputVector,
  thermalSystemMatrices,
  type ThermalConductanceSystem,
  type ThermalDiscrete,
  type ThermalInputIndex,
  type ThermalSystemMatrices,
} from './thermalLti.ts';

export interface ThermalLayout {
  /** Node of each device's junction (first node of its Cauer chain), in spec order. */
  readonly junction: readonly number[];
  readonly heatsink: number;
  readonly coolant: number;
}

export interface ThermalNetwork {
  readonly nNodes: number;
  readonly nDevices: number;
  readonly deviceNames: readonly string[];
  readonly layout: ThermalLayout;
  /** Cauer ladder used for each device (Foster specs converted). */
  readonly junctionCase: readonly CauerNetwork[];
  /** Node heat capacities, all > 0. Typed arrays cannot be frozen: treat as read-only. */
  readonly cJPerK: Float64Array;
  /** 1/cJPerK, precomputed for the derivative hot path. */
  readonly invCKPerJ: Float64Array;
  /** Internal conductances as edges: heat gWPerK·(T[from] − T[to]) flows from → to. */
  readonly edgeFrom: Int32Array;
  readonly edgeTo: Int32Array;
  readonly edgeGWPerK: Float64Array;
  /** Heatsink → coolant conductance (0 when rSinkCoolantKPerW is Infinity); also one of the edges. */
  readonly gSinkCoolantWPerK: number;
  /** Heatsink → ambient conductance (0 when rSinkAmbientKPerW is Infinity). */
  readonly gSinkAmbientWPerK: number;
  readonly coolantCpJPerKgK: number;
}

export interface ThermalInputs {
  /** Loss injected at each device junction, W, in spec order. */
  deviceLossW: ArrayLike<number>;
  /** Passive losses (inductor, capacitors, …) that reach the cold plate, W. */
  sinkExtraW: number;
  inletC: number;
  flowKgPerS: number;
  ambientC: number;
}

export interface ThermalNetworkOptions {
  /**
   * Steady state only: each junction–case impedance becomes one stage with its DC resistance
   * (Σ Ri, which a Foster network and its Cauer ladder share) and a placeholder capacitance
   * (Cauer: ΣCi; Foster: Σ τi/Ri) that only keeps the node well formed.
   * Junction, heatsink and coolant temperatures at steady state are those of the full
   * network; transients are not. Operating points use it, so a device-spread sample does not
   * pay the exact Foster→Cauer expansion it never needs.
   */
  steadyStateOnly?: boolean;
}

function sum(xs: readonly number[]): number {
  let s = 0;
  for (const x of xs) s += x;
  return s;
}

export function buildThermalNetwork(spec: ThermalSpec, options: ThermalNetworkOptions = {}): ThermalNetwork {
  validateThermalSpec(spec);
  const junctionCase = spec.devices.map((dev, i) => {
    const jc = dev.junctionCase;
    if (options.steadyStateOnly) {
      const cJPerK = jc.kind === 'foster' ? jc.tauS.reduce((c, tau, k) => c + tau / jc.rKPerW[k], 0) : sum(jc.cJPerK);
      return Object.freeze({ rKPerW: Object.freeze([sum(jc.rKPerW)]), cJPerK: Object.freeze([cJPerK]) });
    }
    return jc.kind === 'foster'
      ? fosterToCauer(jc, `spec.devices[${i}].junctionCase`)
      : Object.freeze({ rKPerW: Object.freeze([...jc.rKPerW]), cJPerK: Object.freeze([...jc.cJPerK]) });
  });
  const nChain = junctionCase.reduce((sum, c) => sum + c.rKPerW.length, 0);
  const heatsink = nChain;
  const coolant = nChain + 1;
  const nNodes = nChain + 2;

  const cJPerK = new Float64Array(nNodes);
  const from: number[] = [];
  const to: number[] = [];
  const g: number[] = [];
  const junction: number[] = [];
  let node = 0;
  junctionCase.forEach((ladder, d) => {
    junction.push(node);
    const k = ladder.rKPerW.length;
    for (let i = 0; i < k; i++) {
      cJPerK[node + i] = ladder.cJPerK[i];
      from.push(node + i);
      if (i + 1 < k) {
        to.push(node + i + 1);
        g.push(1 / ladder.rKPerW[i]);
      } else {
        // The ladder's far end is the case, which has no capacitance of its own: its last
        // resistor and the case–sink interface are simply in series.
        to.push(heatsink);
        g.push(1 / (ladder.rKPerW[i] + spec.devices[d].caseSinkKPerW));
      }
    }
    node += k;
  });
  const gSinkCoolantWPerK = 1 / spec.heatsink.rSinkCoolantKPerW; // 0 for Infinity
  if (gSinkCoolantWPerK > 0) {
    from.push(heatsink);
    to.push(coolant);
    g.push(gSinkCoolantWPerK);
  }
  cJPerK[heatsink] = spec.heatsink.cthJPerK;
  cJPerK[coolant] = spec.coolant.massKg * spec.coolant.cpJPerKgK;

  return Object.freeze({
    nNodes,
    nDevices: spec.devices.length,
    deviceNames: Object.freeze(spec.devices.map((d) => d.name)),
    layout: Object.freeze({ junction: Object.freeze(junction), heatsink, coolant }),
    junctionCase: Object.freeze(junctionCase),
    cJPerK,
    invCKPerJ: cJPerK.map((c) => 1 / c),
    edgeFrom: Int32Array.from(from),
    edgeTo: Int32Array.from(to),
    edgeGWPerK: Float64Array.from(g),
    gSinkCoolantWPerK,
    gSinkAmbientWPerK: 1 / spec.heatsink.rSinkAmbientKPerW,
    coolantCpJPerKgK: spec.coolant.cpJPerKgK,
  });
}

/** Cheap checks shared by the hot path and the steady-state solver. */
export function checkThermalInputs(net: ThermalNetwork, inputs: ThermalInputs): void {
  const loss = inputs.deviceLossW;
  if (loss == null || loss.length !== net.nDevices)
    throw new Error(`inputs.deviceLossW: must have one entry per device (${net.nDevices}), got ${loss == null ? loss : loss.length}`);
  for (let i = 0; i < loss.length; i++)
    if (!Number.isFinite(loss[i])) throw new Error(`inputs.deviceLossW[${i}]: must be a finite number, got ${loss[i]}`);
  requireFinite(inputs.sinkExtraW, 'inputs.sinkExtraW');
  requireFinite(inputs.inletC, 'inputs.inletC');
  requireFinite(inputs.ambientC, 'inputs.ambientC');
  requireNonNegative(inputs.flowKgPerS, 'inputs.flowKgPerS');
}

function checkState(net: ThermalNetwork, arr: ArrayLike<number>, name: string): void {
  if (arr == null || arr.length !== net.nNodes) throw new Error(`${name}: must have length nNodes = ${net.nNodes}, got ${arr == null ? arr : arr.length}`);
}

/**
 * dT/dt for every node into `out` (no allocation): C_i·dT_i/dt = Σ_j g_ij(T_j − T_i) + P_i,
 * with the coolant node's stream term ṁ·cp·(T_inlet − T_coolant) — the energy balance of a
 * well-mixed (continuously stirred) volume whose outlet is at the node temperature.
 */
export function thermalDerivatives(net: ThermalNetwork, tempC: Float64Array, inputs: ThermalInputs, out: Float64Array): void {
  checkState(net, tempC, 'tempC');
  checkState(net, out, 'out');
  checkThermalInputs(net, inputs);
  if (out === tempC) throw new Error('out: must not be the same array as tempC');
  out.fill(0);
  const { edgeFrom, edgeTo, edgeGWPerK } = net;
  for (let e = 0; e < edgeGWPerK.length; e++) {
    const a = edgeFrom[e];
    const b = edgeTo[e];
    const q = edgeGWPerK[e] * (tempC[a] - tempC[b]);
    out[a] -= q;
    out[b] += q;
  }
  const { junction, heatsink, coolant } = net.layout;
  for (let d = 0; d < net.nDevices; d++) out[junction[d]] += inputs.deviceLossW[d];
  out[heatsink] += inputs.sinkExtraW + net.gSinkAmbientWPerK * (inputs.ambientC - tempC[heatsink]);
  out[coolant] += inputs.flowKgPerS * net.coolantCpJPerKgK * (inputs.inletC - tempC[coolant]);
  for (let i = 0; i < out.length; i++) out[i] *= net.invCKPerJ[i];
}

/**
 * Throws unless every node has a conductive path to a fixed-temperature boundary (ambient or
 * the inlet stream); otherwise the DC conductance matrix is singular and no steady state exists.
 */
function requireSteadyStateExists(net: ThermalNetwork, flowKgPerS: number): void {
  const toAmbient = net.gSinkAmbientWPerK > 0;
  const toInlet = flowKgPerS > 0;
  const linked = net.gSinkCoolantWPerK > 0;
  if (!(toAmbient || (linked && toInlet)))
    throw new Error(
      `thermalSteadyState: no steady state — heat reaching the heatsink has no way out (inputs.flowKgPerS = ${flowKgPerS}` +
        `${linked ? '' : ', heatsink not linked to coolant'}, rSinkAmbientKPerW = ${1 / net.gSinkAmbientWPerK}); temperatures rise without bound`,
    );
  if (!(toInlet || (linked && toAmbient)))
    throw new Error(
      `thermalSteadyState: no steady state — the coolant node is isolated (inputs.flowKgPerS = ${flowKgPerS}, heatsink.rSinkCoolantKPerW = Infinity)`,
    );
}

/** DC solution G·T = B0·u of the network (exact linear solve); allocates, not for the hot path. */
export function thermalSteadyState(net: ThermalNetwork, inputs: ThermalInputs): Float64Array {
  checkThermalInputs(net, inputs);
  requireSteadyStateExists(net, inputs.flowKgPerS);
  const { nNodes: n, nInputs: m, gWPerK, b0 } = thermalConductanceSystem(net, inputs.flowKgPerS);
  const u = new Float64Array(m);
  thermalInputVector(net, inputs, u);
  const rhs = new Float64Array(n);
  for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) rhs[i] += b0[i * m + j] * u[j];
  return solveLinear(gWPerK, n, rhs, 1);
}

/** Heat carried away by the coolant stream, ṁ·cp·(T_coolant − T_inlet) in W (steady-flow energy equation). */
export function heatToCoolantW(net: ThermalNetwork, tempC: ArrayLike<number>, inletC: number, flowKgPerS: number): number {
  checkState(net, tempC, 'tempC');
  requireFinite(inletC, 'inletC');
  requireNonNegative(flowKgPerS, 'flowKgPerS');
  return flowKgPerS * net.coolantCpJPerKgK * (tempC[net.layout.coolant] - inletC);
}

/** Heat leaking from the heatsink to ambient, (T_sink − T_ambient)/rSinkAmbient in W. */
export function heatToAmbientW(net: ThermalNetwork, tempC: ArrayLike<number>, ambientC: number): number {
  checkState(net, tempC, 'tempC');
  requireFinite(ambientC, 'ambientC');
  return net.gSinkAmbientWPerK * (tempC[net.layout.heatsink] - ambientC);
}

/** Σ C_i·(T_i − refC) in J: heat stored relative to a uniform reference temperature. */
export function storedEnergyJ(net: ThermalNetwork, tempC: ArrayLike<number>, refC: number): number {
  checkState(net, tempC, 'tempC');
  requireFinite(refC, 'refC');
  let e = 0;
  for (let i = 0; i < net.nNodes; i++) e += net.cJPerK[i] * (tempC[i] - refC);
  return e;
}

/** Total heat injected, Σ device losses + sinkExtraW, in W. */
export function heatInputW(inputs: ThermalInputs): number {
  let p = inputs.sinkExtraW;
  for (let i = 0; i < inputs.deviceLossW.length; i++) p += inputs.deviceLossW[i];
  return p;
}
