/**
 * Sample kind `margins`: the inner loop's stability margins at each sample's operating point
 * (src/analysis/margins.ts, configured gain basis), reduced to the numbers and flags a study
 * counts. Floors are the supervisor's (pmFloorDeg, gmFloorDb) or its defaults, 45° and 6 dB.
 */
import { LinearizationError } from '../analysis/linearize.ts';
import { marginsAt } from '../analysis/margins.ts';
import type { Scenario } from '../scenario/parse.ts';
import { r7 } from './round.ts';
import type { StudyContext } from './variant.ts';

export interface MarginsSummary {
  status: 'ok' | 'noLoop';
  basis: string;
  fswHz: number;
  vDriveV: number;
  duty: number;
  tjHsC: number;
  tjLsC: number;
  crossoverHz: number;
  pmDeg: number;
  gmDb: number;
  delayMarginS: number;
  maxPoleAbs: number;
  stable: boolean;
  unstable: boolean;
  pmBelowFloor: boolean;
  gmBelowFloor: boolean;
  noLoop: boolean;
  warnings: string[];
  error?: string;
}

export const MARGINS_FIELDS = [
  'status', 'basis', 'fswHz', 'vDriveV', 'duty', 'tjHsC', 'tjLsC', 'crossoverHz', 'pmDeg', 'gmDb', 'delayMarginS',
  'maxPoleAbs', 'stable', 'unstable', 'pmBelowFloor', 'gmBelowFloor', 'noLoop', 'warnings', 'error',
] as const satisfies ReadonlyArray<keyof MarginsSummary>;

export function evaluateMargins(_ctx: StudyContext, s: Scenario): MarginsSummary {
  const pmFloor = s.supervisor?.pmFloorDeg ?? 45;
  const gmFloor = s.supervisor?.gmFloorDb ?? 6;
  try {
    const m = marginsAt(s);
    const b = m.bases[m.configuredBasis];
    return {
      status: 'ok',
      basis: m.configuredBasis,
      fswHz: r7(m.point.fswHz),
      vDriveV: r7(m.point.vDriveV),
      duty: r7(m.point.duty),
      tjHsC: r7(m.point.tjHsC),
      tjLsC: r7(m.point.tjLsC),
      crossoverHz: r7(b.crossoverHz),
      pmDeg: r7(b.pmDeg),
      gmDb: r7(b.gmDb),
      delayMarginS: r7(b.delayMarginS),
      maxPoleAbs: r7(b.maxPoleAbs),
      stable: b.stable,
      unstable: !b.stable,
      pmBelowFloor: !(b.pmDeg >= pmFloor),
      gmBelowFloor: !(b.gmDb >= gmFloor),
      noLoop: false,
      warnings: m.warnings,
    };
  } catch (e) {
    if (!(e instanceof LinearizationError)) throw e;
    // No small-signal loop (runaway, lost regulation): counted as a hazard, not an error.
    return {
      status: 'noLoop', basis: s.control?.basis ?? 'continuous', fswHz: s.pwm.fswHz, vDriveV: s.gateDrive.vDriveV, duty: NaN, tjHsC: NaN, tjLsC: NaN,
      crossoverHz: NaN, pmDeg: NaN, gmDb: NaN, delayMarginS: NaN, maxPoleAbs: NaN, stable: false, unstable: true, pmBelowFloor: true, gmBelowFloor: true,
      noLoop: true, warnings: [], error: e.message,
    };
  }
}
