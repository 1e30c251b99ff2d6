/**
 * Cautions for a run: the same codes, severities and sentence style as the operating point's
 * (analysis/cautions.ts), raised from the extremes the engine watched over the whole run
 * (watch.ts) rather than from one steady state. Each says when it first happened.
 */
import type { Caution } from '../analysis/cautions.ts';
import { peakFluxT } from '../model/magnetics.ts';
import type { SimResult } from './engine.ts';
import type { SimSystem } from './system.ts';

/** A deviation above this fraction of the reference, with the duty at a limit, is lost regulation (our convention). */
export const LOST_REGULATION_FRACTION = 0.01;

const fmt = (x: number, d = 1): string => x.toFixed(d);
const at = (tS: number): string => `at ${fmt(tS, 3)} s`;

export function runCautions(sys: SimSystem, res: SimResult): Caution[] {
  const c: Caution[] = [];
  const ex = res.extremes;
  const plant = sys.plant;
  const lim = sys.scenario.limits;
  if (res.causeCode === 'thermalRunaway')
    c.push({ code: 'thermalRunaway', severity: 'danger', message: `${res.cause}: the run was stopped (loss grows faster with temperature than the cooling removes it)` });
  const devs = [['high side', plant.leg.hs], ['low side', plant.leg.ls]] as const;
  devs.forEach(([name, dev], d) => {
    const peak = ex.tjPeakC[d];
    if (ex.timeAboveMaxS[d] > 0)
      c.push({
        code: 'tjAboveLimit',
        severity: 'danger',
        message: `${name} junction peaked at ${fmt(peak)} °C ${at(ex.tjPeakAtS[d])}, above its ${fmt(dev.tjMaxC, 0)} °C limit for ${fmt(ex.timeAboveMaxS[d], 2)} s`,
      });
    else if (ex.timeInMarginS[d] > 0)
      c.push({
        code: 'tjInMargin',
        severity: 'warning',
        message: `${name} junction reached ${fmt(peak)} °C ${at(ex.tjPeakAtS[d])}, inside the ${fmt(lim.tjMarginK, 0)} K margin below ${fmt(dev.tjMaxC, 0)} °C for ${fmt(ex.timeInMarginS[d], 2)} s`,
      });
  });
  if (!Number.isNaN(ex.shootThroughAtS))
    c.push({
      code: 'shootThrough',
      severity: 'danger',
      message: `shoot-through from ${at(ex.shootThroughAtS).slice(3)}: channels overlap up to ${fmt(ex.overlapS * 1e9)} ns per edge, indicative peak ${fmt(ex.shootPeakA)} A; increase dead time`,
    });
  if (!Number.isNaN(ex.saturationAtS))
    c.push({
      code: 'channelSaturation',
      severity: 'danger',
      message: `${ex.saturatedSide}-side channel saturates ${at(ex.saturationAtS)} at ${fmt(ex.saturationCurrentA)} A with ${fmt(ex.saturationDriveV)} V gate drive: large drop, steep loss, hot-spot risk`,
    });
  if (!Number.isNaN(ex.cannotTurnOnAtS))
    c.push({ code: 'cannotTurnOn', severity: 'danger', message: `gate drive ${fmt(ex.cannotTurnOnDriveV)} V does not pass the Miller plateau ${at(ex.cannotTurnOnAtS)}` });
  if (Number.isNaN(ex.saturationAtS))
    devs.forEach(([name], d) => {
      const od = ex.minOverdriveV[d];
      if (od < lim.minOverdriveV)
        c.push({
          code: 'nearThreshold',
          severity: od < 0 ? 'danger' : 'warning',
          message: `${name}: gate drive only ${fmt(od, 2)} V above what a worst-case part needs at ${fmt(ex.minOverdriveCurrentA[d])} A ${at(ex.minOverdriveAtS[d])} (floor ${fmt(lim.minOverdriveV, 2)} V); threshold spread can saturate one part`,
        });
    });
  const conv = plant.conv;
  if (conv.kind === 'buck' && conv.core?.bSatT !== undefined && ex.iEdgeMaxA > 0) {
    const bPk = peakFluxT(conv.core, conv.lH, ex.iEdgeMaxA);
    if (bPk > conv.core.bSatT)
      c.push({
        code: 'inductorSaturation',
        severity: 'danger',
        message: `inductor peak flux ${fmt(bPk, 3)} T ${at(ex.iEdgeMaxAtS)} exceeds the core's ${fmt(conv.core.bSatT, 2)} T: inductance collapses, current and losses beyond this model`,
      });
  }
  const caps: Array<[string, number, number]> =
    conv.kind === 'buck'
      ? [['output', ex.capOutRmsMaxA, conv.cout.rippleRatingA], ['input', ex.capInRmsMaxA, conv.cin.rippleRatingA]]
      : [['DC-link', ex.capInRmsMaxA, conv.link.rippleRatingA]];
  for (const [name, rms, rating] of caps)
    if (rms > rating)
      c.push({ code: 'capRipple', severity: 'danger', message: `${name} capacitor ripple up to ${fmt(rms, 2)} A rms (over a record interval) exceeds its ${fmt(rating, 2)} A rating: overheating` });
  const ref = res.records.length > 0 ? Math.abs(res.records[res.records.length - 1].reference) : 0;
  const unit = conv.kind === 'buck' ? 'V' : 'A';
  if (ex.dutyPinnedS > 0 && ex.maxAbsErrorY > LOST_REGULATION_FRACTION * Math.max(ref, 1e-9))
    c.push({
      code: 'lostRegulation',
      severity: 'danger',
      message: `output not regulated: duty held at a limit for ${fmt(ex.dutyPinnedS * 1e3, 2)} ms from ${fmt(ex.dutyPinnedFirstAtS, 3)} s on; largest deviation ${fmt(ex.maxAbsErrorY, 3)} ${unit} ${at(ex.maxAbsErrorAtS)}`,
    });
  return c;
}
