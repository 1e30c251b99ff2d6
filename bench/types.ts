/** One benchmark's outcome. Benchmarks print ratios to their targets; nothing here asserts. */
export interface BenchResult {
  /** Stable identifier, the key in bench/results/latest.json. */
  readonly id: string;
  /** What is measured, as printed: `operating points/s`. */
  readonly label: string;
  readonly value: number;
  /** Higher is better when set; the ratio is value/target. */
  readonly target?: number;
  readonly ratio?: number;
  /** Anything worth keeping with the number (workload, durations, counts). */
  readonly details: Readonly<Record<string, unknown>>;
}

export type Bench = () => Promise<BenchResult>;
