/** Seven significant digits: plenty for a study summary, and it keeps result files compact. */
export function r7(x: number): number {
  return Number.isFinite(x) ? Number(x.toPrecision(7)) : x;
}
