/**
 * Hazard watch over a run: peaks, times above limits and first crossings, gathered while the
 * engine runs (a record every second would miss a millisecond excursion). The engine feeds it
 * at leg evaluations, thermal steps and control samples; nothing here allocates per call.
 * `runCautions` (cautions.ts) turns the result into cautions.
 */
import { kAt, vthAt } from '../model/device.ts';
import type { LegResult } from '../model/leg.ts';
import type { Plant } from '../model/plant.ts';

/** Per-device pairs are [high side, low side]. Times of first crossings are NaN when never crossed. */
export interface RunExtremes {
  tjPeakC: [number, number];
  tjPeakAtS: [number, number];
  /** Time spent above tjMax − tjMarginK (includes time above tjMax). */
  timeInMarginS: [number, number];
  timeAboveMaxS: [number, number];
  /** Time with either junction above its own tjMax − margin / tjMax. */
  timeAnyInMarginS: number;
  timeAnyAboveMaxS: number;
  /** Largest |reference − measured| at a control sample. */
  maxAbsErrorY: number;
  maxAbsErrorAtS: number;
  /** Time with the controller output held at a duty limit. */
  dutyPinnedS: number;
  dutyPinnedFirstAtS: number;
  shootThroughAtS: number;
  shootPeakA: number;
  overlapS: number;
  saturationAtS: number;
  saturatedSide: 'high' | 'low' | '';
  saturationCurrentA: number;
  saturationDriveV: number;
  cannotTurnOnAtS: number;
  cannotTurnOnDriveV: number;
  /** Largest inductor edge current |peak| or |valley| seen at a leg evaluation, and when. */
  iEdgeMaxA: number;
  iEdgeMaxAtS: number;
  /** Highest RMS ripple current over a record interval. */
  capOutRmsMaxA: number;
  capInRmsMaxA: number;
  /** Smallest gate overdrive above what a worst-case part (threshold + spread) needs at the edge current. */
  minOverdriveV: [number, number];
  minOverdriveAtS: [number, number];
  minOverdriveCurrentA: [number, number];
}

export class RunWatch {
  private readonly r: RunExtremes = {
    tjPeakC: [-Infinity, -Infinity],
    tjPeakAtS: [NaN, NaN],
    timeInMarginS: [0, 0],
    timeAboveMaxS: [0, 0],
    timeAnyInMarginS: 0,
    timeAnyAboveMaxS: 0,
    maxAbsErrorY: 0,
    maxAbsErrorAtS: NaN,
    dutyPinnedS: 0,
    dutyPinnedFirstAtS: NaN,
    shootThroughAtS: NaN,
    shootPeakA: 0,
    overlapS: 0,
    saturationAtS: NaN,
    saturatedSide: '',
    saturationCurrentA: 0,
    saturationDriveV: NaN,
    cannotTurnOnAtS: NaN,
    cannotTurnOnDriveV: NaN,
    iEdgeMaxA: 0,
    iEdgeMaxAtS: NaN,
    capOutRmsMaxA: 0,
    capInRmsMaxA: 0,
    minOverdriveV: [Infinity, Infinity],
    minOverdriveAtS: [NaN, NaN],
    minOverdriveCurrentA: [NaN, NaN],
  };
  private readonly tjMaxC: [number, number];
  private readonly marginK: number;

  constructor(private readonly plant: Plant, tjMarginK: number, private readonly vthSpreadV: number) {
    this.tjMaxC = [plant.leg.hs.tjMaxC, plant.leg.ls.tjMaxC];
    this.marginK = tjMarginK;
  }

  /** A leg evaluation at time tS with gate drive vDriveV and the junction temperatures it used. */
  leg(lg: LegResult, vDriveV: number, tjHsC: number, tjLsC: number, tS: number): void {
    const r = this.r;
    if (lg.shootThrough) {
      if (Number.isNaN(r.shootThroughAtS)) r.shootThroughAtS = tS;
      r.shootPeakA = Math.max(r.shootPeakA, lg.shootPeakA);
      r.overlapS = Math.max(r.overlapS, lg.overlapS);
    }
    const iEdge = Math.max(Math.abs(lg.iPeakA), Math.abs(lg.iValleyA));
    if (iEdge > r.iEdgeMaxA) {
      r.iEdgeMaxA = iEdge;
      r.iEdgeMaxAtS = tS;
    }
    if ((lg.hsSaturated || lg.lsSaturated) && Number.isNaN(r.saturationAtS)) {
      r.saturationAtS = tS;
      r.saturatedSide = lg.hsSaturated ? 'high' : 'low';
      r.saturationCurrentA = iEdge;
      r.saturationDriveV = vDriveV;
    }
    if ((lg.hsCannotTurnOn || lg.lsCannotTurnOn) && Number.isNaN(r.cannotTurnOnAtS)) {
      r.cannotTurnOnAtS = tS;
      r.cannotTurnOnDriveV = vDriveV;
    }
    // Same criterion as the operating point's nearThreshold caution (analysis/cautions.ts).
    const devs = [this.plant.leg.hs, this.plant.leg.ls] as const;
    for (let d = 0; d < 2; d++) {
      const tj = d === 0 ? tjHsC : tjLsC;
      const need = vthAt(devs[d], tj) + this.vthSpreadV + Math.sqrt((2 * iEdge) / kAt(devs[d], tj));
      const od = vDriveV - need;
      if (od < r.minOverdriveV[d]) {
        r.minOverdriveV[d] = od;
        r.minOverdriveAtS[d] = tS;
        r.minOverdriveCurrentA[d] = iEdge;
      }
    }
  }

  /** Junction temperatures after a thermal step of dtS ending at tS (held over the step for the time counts). */
  thermal(tjHsC: number, tjLsC: number, dtS: number, tS: number): void {
    const r = this.r;
    let inMargin = false;
    let above = false;
    for (let d = 0; d < 2; d++) {
      const tj = d === 0 ? tjHsC : tjLsC;
      if (tj > r.tjPeakC[d]) {
        r.tjPeakC[d] = tj;
        r.tjPeakAtS[d] = tS;
      }
      if (tj > this.tjMaxC[d] - this.marginK) {
        r.timeInMarginS[d] += dtS;
        inMargin = true;
      }
      if (tj > this.tjMaxC[d]) {
        r.timeAboveMaxS[d] += dtS;
        above = true;
      }
    }
    if (inMargin) r.timeAnyInMarginS += dtS;
    if (above) r.timeAnyAboveMaxS += dtS;
  }

  /** A control sample: error, whether the output sits at a duty limit, and the sample period it holds for. */
  sample(errorY: number, pinned: boolean, dtS: number, tS: number): void {
    const r = this.r;
    const a = Math.abs(errorY);
    if (a > r.maxAbsErrorY) {
      r.maxAbsErrorY = a;
      r.maxAbsErrorAtS = tS;
    }
    if (pinned) {
      if (Number.isNaN(r.dutyPinnedFirstAtS)) r.dutyPinnedFirstAtS = tS;
      r.dutyPinnedS += dtS;
    }
  }

  /** Time held at a duty limit without samples (settled stretches). */
  pinnedHeld(dtS: number): void {
    this.r.dutyPinnedS += dtS;
  }

  capacitorRms(outA: number, inA: number): void {
    if (outA > this.r.capOutRmsMaxA) this.r.capOutRmsMaxA = outA;
    if (inA > this.r.capInRmsMaxA) this.r.capInRmsMaxA = inA;
  }

  result(): RunExtremes {
    const r = this.r;
    return structuredClone(r);
  }
}
