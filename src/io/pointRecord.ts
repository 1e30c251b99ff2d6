/**
 * The plain record of one steady-state operating point: what `point --json` prints and what
 * each `sweep` row carries. Field names carry SI units; the key order is part of the contract
 * (CSV columns follow it), so add fields at the end of their group rather than reorder.
 */
import type { OperatingPoint } from '../analysis/operatingPoint.ts';
import type { CapacitorState } from '../model/electrical.ts';
import type { DeviceLoss } from '../model/leg.ts';
import type { Scenario } from '../scenario/parse.ts';

export interface CapacitorRecord {
  rmsA: number;
  ratingA: number;
  lossW: number;
}

export interface PointRecord {
  scenario: string;
  topology: 'buck' | 'halfBridge';
  status: OperatingPoint['status'];
  regulated: boolean;
  fswHz: number;
  deadTimeS: number;
  vDriveV: number;
  lowSideMode: 'sync' | 'diode';
  dutyCycle: number;
  vinV: number;
  voutV: number;
  ioutA: number;
  pinW: number;
  poutW: number;
  efficiency: number;
  totalLossW: number;
  semiconductorLossW: number;
  passiveLossW: number;
  gateDriverW: number;
  iPeakA: number;
  iValleyA: number;
  ripplePpA: number;
  voutRipplePpV: number;
  tjC: { highSide: number; lowSide: number };
  tjMaxC: { highSide: number; lowSide: number };
  heatsinkC: number;
  coolantOutC: number;
  heatToCoolantW: number;
  heatToAmbientW: number;
  usefulHeatFraction: number;
  /** Buck: output and input capacitors. Half-bridge: `output` is null, `input` is the DC link. */
  capacitors: { output: CapacitorRecord | null; input: CapacitorRecord };
  deadTime: { effectiveRiseS: number; effectiveFallS: number; diodeRiseS: number; diodeFallS: number; shootThrough: boolean };
  breakdown: {
    highSide: DeviceLoss;
    lowSide: DeviceLoss;
    inductorCopperW: number;
    inductorCoreW: number;
    capOutW: number;
    capInW: number;
    gateDriverW: number;
  };
  cautions: { code: string; severity: 'warning' | 'danger'; message: string }[];
  /** |Pin − Pout − ΣPloss| / Pin of the electrical solution. */
  energyBalanceResidual: number;
  iterations: number;
}

function cap(c: CapacitorState): CapacitorRecord {
  return { rmsA: c.rmsA, ratingA: c.ratingA, lossW: c.lossW };
}

/** The point computed for `scenario` (its name, low-side mode and device limits are copied in). */
export function pointRecord(op: OperatingPoint, scenario: Scenario): PointRecord {
  const e = op.electrical;
  const leg = e.leg;
  const isBuck = e.topology === 'buck';
  return {
    scenario: scenario.name,
    topology: e.topology,
    status: op.status,
    regulated: e.regulated,
    fswHz: e.knobs.fswHz,
    deadTimeS: e.knobs.deadTimeS,
    vDriveV: e.knobs.vDriveV,
    lowSideMode: scenario.pwm.lowSideMode,
    dutyCycle: e.duty,
    vinV: e.vBusV,
    voutV: e.vOutV,
    ioutA: e.iMeanA,
    pinW: e.pinW,
    poutW: e.poutW,
    efficiency: e.efficiency,
    totalLossW: e.totalLossW,
    semiconductorLossW: e.semiW,
    passiveLossW: e.passiveW,
    gateDriverW: e.gateDriverW,
    iPeakA: leg.iPeakA,
    iValleyA: leg.iValleyA,
    ripplePpA: leg.ripplePpA,
    voutRipplePpV: e.vOutRipplePpV,
    tjC: { highSide: op.tjHsC, lowSide: op.tjLsC },
    tjMaxC: { highSide: scenario.devices.highSide.tjMaxC, lowSide: scenario.devices.lowSide.tjMaxC },
    heatsinkC: op.heatsinkC,
    coolantOutC: op.coolantOutC,
    heatToCoolantW: op.heatToCoolantW,
    heatToAmbientW: op.heatToAmbientW,
    usefulHeatFraction: op.usefulHeatFraction,
    capacitors: { output: isBuck ? cap(e.capOut) : null, input: cap(e.capIn) },
    deadTime: {
      effectiveRiseS: leg.gapRiseS,
      effectiveFallS: leg.gapFallS,
      diodeRiseS: leg.diodeRiseS,
      diodeFallS: leg.diodeFallS,
      shootThrough: leg.shootThrough,
    },
    breakdown: {
      highSide: { ...leg.hs },
      lowSide: { ...leg.ls },
      inductorCopperW: e.inductorCopperW,
      inductorCoreW: e.inductorCoreW,
      capOutW: e.capOut.lossW,
      capInW: e.capIn.lossW,
      gateDriverW: e.gateDriverW,
    },
    cautions: op.cautions.map((c) => ({ code: c.code, severity: c.severity, message: c.message })),
    energyBalanceResidual: e.balanceResidual,
    iterations: op.iterations,
  };
}
