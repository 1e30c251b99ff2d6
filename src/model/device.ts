/**
 * MOSFET + body diode: static conduction and gate-charge switching model.
 * Pure functions; all temperatures are junction temperatures in °C.
 */

export interface DeviceParams {
  readonly part: string;
  readonly label: string;
  readonly vdsRatedV: number;
  readonly kAPerV2: number;
  readonly vth25V: number;
  readonly vthTempCoeffVPerK: number;
  readonly rSeries25Ohm: number;
  readonly rdsTempCoeffPerK: number;
  readonly lambdaPerV: number;
  readonly cissF: number;
  readonly qgdCoulomb: number;
  readonly qgdRefV: number;
  readonly qgCoulomb: number;
  readonly qgRefV: number;
  readonly rGateIntOhm: number;
  readonly cossF: number;
  readonly diodeVf25V: number;
  readonly diodeROhm: number;
  readonly diodeVfTempCoeffVPerK: number;
  readonly qrr25Coulomb: number;
  readonly qrrRefA: number;
  readonly qrrTempCoeffPerK: number;
  readonly tjMaxC: number;
}

export interface GateDriveParams {
  readonly vDriveV: number;
  readonly vOffV: number;
  readonly rDriverOnOhm: number;
  readonly rDriverOffOhm: number;
  readonly rGateExtOhm: number;
}

/** Temperature factor (1+α)^(Tj−25) (Graovac, Pürschel, Kiep, Infineon AN "MOSFET Power Losses Calculation Using the Data-Sheet Parameters", 2006). */
// Hot path: a leg evaluation asks for the same (α, Tj) many times, alternating between the two
// devices' junction temperatures, so two slots (least recently used replaced) keep both. The
// slots live in a Float64Array, not in module-level `let`s: a double stored into a module
// variable is boxed in a fresh heap number on every store, and this memo is written on nearly
// every call.
// Layout: [α_A, Tj_A, factor_A, α_B, Tj_B, factor_B]; slot A is the most recently used.
const tempFactorMemo = new Float64Array([NaN, NaN, 1, NaN, NaN, 1]);
export function rdsTempFactor(dev: DeviceParams, tjC: number): number {
  const m = tempFactorMemo;
  const alpha = dev.rdsTempCoeffPerK;
  if (alpha === m[0] && tjC === m[1]) return m[2];
  if (alpha !== m[3] || tjC !== m[4]) {
    m[3] = alpha;
    m[4] = tjC;
    m[5] = Math.pow(1 + alpha, tjC - 25);
  }
  // Promote the hit (or the new entry) to slot A.
  const f = m[5];
  m[3] = m[0]; m[4] = m[1]; m[5] = m[2];
  m[0] = alpha; m[1] = tjC; m[2] = f;
  return f;
}

/** Threshold voltage at Tj: falls a few mV/K (typical datasheet figure). */
export function vthAt(dev: DeviceParams, tjC: number): number {
  return dev.vth25V + dev.vthTempCoeffVPerK * (tjC - 25);
}

/** Square-law k at Tj: mobility falls with temperature with the same power law as the series resistance. */
export function kAt(dev: DeviceParams, tjC: number): number {
  return dev.kAPerV2 / rdsTempFactor(dev, tjC);
}

/** Saturation current k/2·Vov² (Shichman & Hodges, IEEE JSSC SC-3, 1968); 0 below threshold. */
export function saturationCurrentA(dev: DeviceParams, vgsV: number, tjC: number): number {
  return saturationCurrentAt(kAt(dev, tjC), vgsV - vthAt(dev, tjC));
}

/** `saturationCurrentA` with k at Tj and the overdrive Vgs − Vth(Tj) already evaluated (see `channelDropAt`). */
export function saturationCurrentAt(kT: number, vov: number): number {
  return vov > 0 ? 0.5 * kT * vov * vov : 0;
}

/**
 * Forward (first-quadrant) drop of the channel plus series resistance at current iA ≥ 0.
 * Triode: Vds = Vov − sqrt(Vov² − 2I/k) (square law, Shichman & Hodges 1968). Past the
 * saturation current the channel is a current source with channel-length modulation:
 * I = Isat·(1 + λ·(Vds − Vov)), so the drop climbs steeply; the caller caps it at the bus.
 * Below threshold the channel carries nothing and the drop is `vCapV`.
 */
export function channelDropV(dev: DeviceParams, iA: number, vgsV: number, tjC: number, vCapV: number): number {
  return channelDropAt(kAt(dev, tjC), vgsV - vthAt(dev, tjC), dev.rSeries25Ohm * rdsTempFactor(dev, tjC), dev.lambdaPerV, iA, vCapV);
}

/**
 * `channelDropV` with the temperature-dependent constants already evaluated (k at Tj, overdrive
 * Vgs − Vth(Tj), series resistance at Tj): for loops over many currents at one operating state.
 */
export function channelDropAt(kT: number, vov: number, rs: number, lambdaPerV: number, iA: number, vCapV: number): number {
  let vch: number;
  if (vov <= 0) return iA > 0 ? vCapV : 0;
  const isat = saturationCurrentAt(kT, vov);
  if (iA < isat) {
    vch = vov - Math.sqrt(vov * vov - (2 * iA) / kT);
  } else {
    vch = vov + (iA / isat - 1) / (isat > 0 ? lambdaPerV : 1);
  }
  return Math.min(vch + rs * iA, vCapV);
}

/** Small-current on-resistance 1/(k·Vov) + Rseries at Tj (Shichman & Hodges; REFERENCES.md). */
export function rdsOnOhm(dev: DeviceParams, vgsV: number, tjC: number): number {
  const vov = vgsV - vthAt(dev, tjC);
  if (vov <= 0) return Infinity;
  return 1 / (kAt(dev, tjC) * vov) + dev.rSeries25Ohm * rdsTempFactor(dev, tjC);
}

/** Body-diode forward drop Vf0 + Rd·I, with Vf falling about 2 mV/K (typical datasheet figure). */
export function diodeDropV(dev: DeviceParams, iA: number, tjC: number): number {
  if (iA <= 0) return 0;
  return dev.diodeVf25V + dev.diodeVfTempCoeffVPerK * (tjC - 25) + dev.diodeROhm * iA;
}

/**
 * Third-quadrant drop (current from source to drain): channel and body diode in parallel,
 * approximated by the smaller of the two drops. `channelOn` false means the diode alone.
 */
export function reverseDropV(dev: DeviceParams, iA: number, vgsV: number, tjC: number, channelOn: boolean, vCapV: number): number {
  const vd = diodeDropV(dev, iA, tjC);
  if (!channelOn) return vd;
  return Math.min(vd, channelDropV(dev, iA, vgsV, tjC, vCapV));
}

/** Reverse-recovery charge at forward current iA: ∝ sqrt(I) about the rated point, rising with Tj (common practice). */
export function qrrCoulomb(dev: DeviceParams, iA: number, tjC: number): number {
  if (iA <= 0) return 0;
  return dev.qrr25Coulomb * Math.sqrt(iA / dev.qrrRefA) * Math.max(0, 1 + dev.qrrTempCoeffPerK * (tjC - 25));
}

/** Gate charge needed to swing the gate from vOffV to vDriveV: the rated Qg moved along Ciss (linear above the plateau). */
export function gateChargeCoulomb(dev: DeviceParams, vDriveV: number, vOffV: number): number {
  const above = dev.qgCoulomb + dev.cissF * (vDriveV - dev.qgRefV);
  return Math.max(dev.cissF * vDriveV, above) + dev.cissF * -vOffV;
}

/** Results of one device's switching-transition timing at (V, I, Tj); times in seconds. */
export interface SwitchTiming {
  /** Miller plateau Vth + sqrt(2I/k): the gate voltage at which the channel carries I. */
  plateauV: number;
  /** The driver can pass the plateau: the device can fully turn on at this current. */
  canTurnOn: boolean;
  tdOnS: number;
  tRiseCurrentS: number;
  tFallVoltageS: number;
  tdOffS: number;
  tRiseVoltageS: number;
  tFallCurrentS: number;
}

const MIN_HEADROOM_V = 0.05;

/**
 * Gate-charge method (Vishay AN608A "Power MOSFET Basics: Understanding Gate Charge";
 * Graovac et al., Infineon 2006): delays and current transitions charge Ciss through the
 * total gate resistance (exact RC), voltage transitions move Qgd (scaled linearly by
 * V_DS/V_spec) with the current set by the headroom to the plateau:
 *   t_vf = R_G·(Qgd/V_spec)·V_DS/(V_drive − V_plateau),  t_vr = R_G·(Qgd/V_spec)·V_DS/(V_plateau − V_off).
 */
export function switchTiming(dev: DeviceParams, gate: GateDriveParams, vDriveV: number, vBusV: number, iA: number, tjC: number, out: SwitchTiming): SwitchTiming {
  const vth = vthAt(dev, tjC);
  const kT = kAt(dev, tjC);
  const vpl = vth + Math.sqrt((2 * Math.max(iA, 0)) / kT);
  const vOff = gate.vOffV;
  const rOn = gate.rDriverOnOhm + gate.rGateExtOhm + dev.rGateIntOhm;
  const rOff = gate.rDriverOffOhm + gate.rGateExtOhm + dev.rGateIntOhm;
  const span = vDriveV - vOff;
  out.plateauV = vpl;
  out.canTurnOn = vDriveV - vpl > MIN_HEADROOM_V;
  const headOn = Math.max(vDriveV - vpl, MIN_HEADROOM_V);
  const vthEff = Math.min(vth, vDriveV - MIN_HEADROOM_V);
  out.tdOnS = rOn * dev.cissF * Math.log(span / Math.max(vDriveV - vthEff, MIN_HEADROOM_V));
  out.tRiseCurrentS = rOn * dev.cissF * Math.log(Math.max(vDriveV - vthEff, MIN_HEADROOM_V) / headOn);
  const qgdPerV = dev.qgdCoulomb / dev.qgdRefV;
  out.tFallVoltageS = (rOn * qgdPerV * vBusV) / headOn;
  const vplOff = Math.min(vpl, vDriveV);
  out.tdOffS = rOff * dev.cissF * Math.log(span / Math.max(vplOff - vOff, MIN_HEADROOM_V));
  out.tRiseVoltageS = (rOff * qgdPerV * vBusV) / Math.max(vplOff - vOff, MIN_HEADROOM_V);
  out.tFallCurrentS = rOff * dev.cissF * Math.log(Math.max(vplOff - vOff, MIN_HEADROOM_V) / Math.max(vth - vOff, MIN_HEADROOM_V));
  return out;
}

export function newSwitchTiming(): SwitchTiming {
  return { plateauV: 0, canTurnOn: true, tdOnS: 0, tRiseCurrentS: 0, tFallVoltageS: 0, tdOffS: 0, tRiseVoltageS: 0, tFallCurrentS: 0 };
}

/** Hard turn-on overlap energy ½·V·I·(t_ri + t_vf) (linear-transition approximation, Graovac et al. 2006). */
export function turnOnEnergyJ(vBusV: number, iA: number, t: SwitchTiming): number {
  return 0.5 * vBusV * iA * (t.tRiseCurrentS + t.tFallVoltageS);
}

/** Hard turn-off overlap energy ½·V·I·(t_vr + t_fi). */
export function turnOffEnergyJ(vBusV: number, iA: number, t: SwitchTiming): number {
  return 0.5 * vBusV * iA * (t.tRiseVoltageS + t.tFallCurrentS);
}
