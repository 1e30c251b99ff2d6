/**
 * Piscina worker: evaluates batches of sample indexes and returns their JSON lines. The study
 * (spec and base scenario, as validated plain inputs) arrives once through workerData; each
 * worker rebuilds the same context, so a record never depends on the worker that made it.
 */
import { move, workerData } from 'piscina';
import { parseScenarioObject } from '../scenario/parse.ts';
import { type NominalCache, evaluateSample } from './evaluate.ts';
import { recordLine } from './records.ts';
import { samplePlan } from './sampler.ts';
import { parseStudySpecObject } from './spec.ts';
import { type StudyContext, studyContext } from './variant.ts';

export interface StudyWorkerData {
  specInput: unknown;
  scenarioInput: unknown;
}

let ctx: StudyContext | undefined;
const nominal = new Map<string, ReturnType<NominalCache['get']> & object>();
const cache: NominalCache = {
  get: (k) => nominal.get(k),
  set: (k, v) => {
    if (nominal.size > 4096) nominal.clear();
    nominal.set(k, v);
  },
};

function context(): StudyContext {
  if (!ctx) {
    const d = workerData as StudyWorkerData;
    ctx = studyContext(parseStudySpecObject(d.specInput), parseScenarioObject(d.scenarioInput));
  }
  return ctx;
}

const utf8 = new TextEncoder();

/**
 * One task: the sample indexes to evaluate; the result is one JSON line per sample, in order,
 * as UTF-8 bytes moved (not copied) to the main thread, which appends them to the results file
 * as they are: the encoding happens here, in parallel, and the main thread stays nearly idle.
 */
export default function evaluateBatch(indexes: readonly number[]): ReturnType<typeof move> {
  const c = context();
  let out = '';
  for (const i of indexes) out += recordLine(evaluateSample(c, samplePlan(c.spec, i), cache));
  return move(utf8.encode(out));
}
