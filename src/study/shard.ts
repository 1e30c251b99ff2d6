/**
 * `--shard K/N` and `--shard auto/N`. Shard K of N runs the samples whose index mod N is K
 * (strided, so each shard sees every grid cell and about the same mix of slow and fast
 * samples). With `auto`, K comes from the array index the batch scheduler gives each task.
 */

export interface Shard {
  readonly k: number;
  readonly n: number;
}

export class ShardError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'ShardError';
  }
}

/**
 * Array-index variables of common schedulers, in the order they are tried. `first` names a
 * variable holding the array's first index when the scheduler sets one (so `--array=1-4` works
 * as well as `0-3`); otherwise `base` is the index the array conventionally starts at.
 */
export const SCHEDULER_INDEX_VARS: ReadonlyArray<{ name: string; scheduler: string; base: number; first?: string; step?: string }> = [
  { name: 'JOB_COMPLETION_INDEX', scheduler: 'Kubernetes indexed Job', base: 0 },
  { name: 'SLURM_ARRAY_TASK_ID', scheduler: 'Slurm job array', base: 0, first: 'SLURM_ARRAY_TASK_MIN', step: 'SLURM_ARRAY_TASK_STEP' },
  { name: 'PBS_ARRAY_INDEX', scheduler: 'PBS Pro job array', base: 0 },
  { name: 'SGE_TASK_ID', scheduler: 'Grid Engine array job (1-based)', base: 1, first: 'SGE_TASK_FIRST', step: 'SGE_TASK_STEPSIZE' },
  { name: 'AWS_BATCH_JOB_ARRAY_INDEX', scheduler: 'AWS Batch array job', base: 0 },
];

function wholeNumber(text: string | undefined): number | undefined {
  if (text === undefined || !/^\s*\d+\s*$/.test(text)) return undefined;
  const v = Number(text);
  return Number.isSafeInteger(v) ? v : undefined;
}

/** K from the environment for `auto/N`: the first scheduler variable that is set. */
export function shardFromEnv(n: number, env: Readonly<Record<string, string | undefined>>): Shard {
  for (const v of SCHEDULER_INDEX_VARS) {
    const raw = env[v.name];
    if (raw === undefined || raw === '') continue;
    const id = wholeNumber(raw);
    if (id === undefined) throw new ShardError(`--shard auto/${n}: ${v.name} must be a whole number, got ${JSON.stringify(raw)}`);
    const first = v.first ? (wholeNumber(env[v.first]) ?? v.base) : v.base;
    const step = v.step ? (wholeNumber(env[v.step]) ?? 1) : 1;
    if (id < first || (id - first) % Math.max(step, 1) !== 0)
      throw new ShardError(`--shard auto/${n}: ${v.name}=${id} is not an index of an array starting at ${first} with step ${step}`);
    const k = (id - first) / Math.max(step, 1);
    if (k >= n)
      throw new ShardError(
        `--shard auto/${n}: ${v.name}=${id} gives shard ${k}, but shards run from 0 to ${n - 1}; launch the ${v.scheduler} with exactly ${n} tasks (indexes ${first}..${first + (n - 1) * step})`,
      );
    return { k, n };
  }
  throw new ShardError(
    `--shard auto/${n}: no scheduler array index found; set one of ${SCHEDULER_INDEX_VARS.map((v) => v.name).join(', ')} (or give the shard as K/${n})`,
  );
}

/** Parse `K/N` (0 ≤ K < N) or `auto/N`. */
export function parseShard(text: string, env: Readonly<Record<string, string | undefined>> = {}): Shard {
  const m = /^\s*(auto|\d+)\s*\/\s*(\d+)\s*$/.exec(text);
  if (!m) throw new ShardError(`--shard: expected K/N (e.g. 0/4) or auto/N, got ${JSON.stringify(text)}`);
  const n = Number(m[2]);
  if (!Number.isSafeInteger(n) || n < 1 || n > 1_000_000) throw new ShardError(`--shard: N must be a whole number from 1 to 1000000, got ${m[2]}`);
  if (m[1] === 'auto') return shardFromEnv(n, env);
  const k = Number(m[1]);
  if (k >= n) throw new ShardError(`--shard: K must be from 0 to ${n - 1} for N = ${n}, got ${k}`);
  return { k, n };
}
