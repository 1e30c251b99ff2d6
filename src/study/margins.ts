/**
 * Sample kind `margins`: loop margins of each sample. The margin analysis (src/analysis/margins.ts)
 * is not in the tree yet; until it is, a study of this kind is refused up front with a clear
 * message instead of failing sample by sample.
 */
import { ScenarioError } from '../scenario/errors.ts';
import type { Scenario } from '../scenario/parse.ts';
import type { StudyContext } from './variant.ts';

export interface MarginsSummary {
  status: string;
  [field: string]: string | number | boolean | null;
}

export const MARGINS_AVAILABLE = false;

export function evaluateMargins(_ctx: StudyContext, _s: Scenario): MarginsSummary {
  throw new ScenarioError([{ path: 'kind', message: 'margins studies need the margin analysis (src/analysis/margins.ts), which this build does not have yet; use point or run' }]);
}
