/**
 * Parsed scenarios shared between sessions: a Scenario is immutable, and the analyses cache per
 * Scenario object (margin context, the supervisor's stable band), so twenty sessions of the same
 * demo case pay for those once. Keyed by the exact text; a small LRU.
 */
import { type Scenario, parseScenario } from '../scenario/parse.ts';

const MAX_ENTRIES = 16;
const cache = new Map<string, Scenario>();

export function parseScenarioShared(text: string): Scenario {
  const hit = cache.get(text);
  if (hit) {
    cache.delete(text);
    cache.set(text, hit);
    return hit;
  }
  const sc = parseScenario(text);
  cache.set(text, sc);
  if (cache.size > MAX_ENTRIES) cache.delete(cache.keys().next().value as string);
  return sc;
}
