/**
 * Hazard checks on a result: each crossed limit becomes a caution with a code, a severity and
 * a sentence a practitioner can act on. Results carry them; the CLI and report print them.
 */
import { kAt, vthAt } from '../model/device.ts';
import type { ElectricalPoint } from '../model/electrical.ts';
import type { Plant } from '../model/plant.ts';

export type CautionCode =
  | 'tjAboveLimit'
  | 'tjInMargin'
  | 'thermalRunaway'
  | 'capRipple'
  | 'shootThrough'
  | 'channelSaturation'
  | 'nearThreshold'
  | 'cannotTurnOn'
  | 'lostRegulation'
  | 'inductorSaturation';

export interface Caution {
  readonly code: CautionCode;
  readonly severity: 'warning' | 'danger';
  readonly message: string;
}

export const HARDWARE_NOTICE =
  'Simulation only: validate on hardware with current limits and protections in place, under local codes and licensed practice.';

export interface CautionLimits {
  tjMarginK: number;
  minOverdriveV: number;
  vthSpreadV: number;
}

const fmt = (x: number, d = 1): string => x.toFixed(d);

export function electricalCautions(plant: Plant, ep: ElectricalPoint, tjH: number, tjL: number, lim: CautionLimits): Caution[] {
  const c: Caution[] = [];
  const leg = ep.leg;
  if (!ep.regulated)
    c.push({ code: 'lostRegulation', severity: 'danger', message: `output not regulated: duty pinned at ${fmt(ep.duty, 3)}, output ${fmt(ep.vOutV, 2)} V` });
  if (leg.shootThrough)
    c.push({
      code: 'shootThrough',
      severity: 'danger',
      message: `shoot-through: channels overlap ${fmt(leg.overlapS * 1e9)} ns per edge, indicative peak ${fmt(leg.shootPeakA)} A; increase dead time`,
    });
  if (leg.hsSaturated || leg.lsSaturated)
    c.push({
      code: 'channelSaturation',
      severity: 'danger',
      message: `${leg.hsSaturated ? 'high' : 'low'}-side channel saturates at ${fmt(Math.max(Math.abs(leg.iPeakA), Math.abs(leg.iValleyA)))} A with ${fmt(ep.knobs.vDriveV)} V gate drive: large drop, steep loss, hot-spot risk`,
    });
  if (leg.hsCannotTurnOn || leg.lsCannotTurnOn)
    c.push({ code: 'cannotTurnOn', severity: 'danger', message: `gate drive ${fmt(ep.knobs.vDriveV)} V does not pass the Miller plateau at this current` });
  // Overdrive at peak current against the worst-case (highest) threshold in the allowed spread.
  for (const [name, dev, tj] of [['high side', plant.leg.hs, tjH], ['low side', plant.leg.ls, tjL]] as const) {
    const ipk = Math.max(Math.abs(leg.iPeakA), Math.abs(leg.iValleyA));
    const vNeeded = vthAt(dev, tj) + lim.vthSpreadV + Math.sqrt((2 * ipk) / kAt(dev, tj));
    const od = ep.knobs.vDriveV - vNeeded;
    if (od < lim.minOverdriveV && !(leg.hsSaturated || leg.lsSaturated))
      c.push({
        code: 'nearThreshold',
        severity: od < 0 ? 'danger' : 'warning',
        message: `${name}: gate drive only ${fmt(od, 2)} V above what a worst-case part needs at ${fmt(ipk)} A (floor ${fmt(lim.minOverdriveV, 2)} V); threshold spread can saturate one part`,
      });
  }
  if (ep.bPeakT > ep.bSatT)
    c.push({
      code: 'inductorSaturation',
      severity: 'danger',
      message: `inductor peak flux ${fmt(ep.bPeakT, 3)} T exceeds the core's ${fmt(ep.bSatT, 2)} T: inductance collapses, current and losses beyond this model`,
    });
  for (const [name, cap] of [['output', ep.capOut], ['input', ep.capIn]] as const) {
    if (cap.utilization > 1)
      c.push({ code: 'capRipple', severity: 'danger', message: `${name} capacitor ripple ${fmt(cap.rmsA, 2)} A rms exceeds its ${fmt(cap.ratingA, 2)} A rating: overheating` });
  }
  return c;
}

export function thermalCautions(plant: Plant, tjH: number, tjL: number, lim: CautionLimits): Caution[] {
  const c: Caution[] = [];
  for (const [name, dev, tj] of [['high side', plant.leg.hs, tjH], ['low side', plant.leg.ls, tjL]] as const) {
    if (tj > dev.tjMaxC) c.push({ code: 'tjAboveLimit', severity: 'danger', message: `${name} junction ${fmt(tj)} °C above its ${fmt(dev.tjMaxC, 0)} °C limit` });
    else if (tj > dev.tjMaxC - lim.tjMarginK)
      c.push({ code: 'tjInMargin', severity: 'warning', message: `${name} junction ${fmt(tj)} °C inside the ${fmt(lim.tjMarginK, 0)} K margin below ${fmt(dev.tjMaxC, 0)} °C` });
  }
  return c;
}
