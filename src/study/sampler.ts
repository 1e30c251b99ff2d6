/**
 * Sample i of a study as a pure function of (spec, i): its grid cell, its random parameter
 * values, its device-instance draws and its seed. Nothing depends on which worker or shard
 * computes it, or in which order.
 *
 * Streams: the study seed keys a root generator; replicate r = i mod replicates forks it
 * (`Rng.fork`, which depends only on seed and offset); each quantity forks the replicate's
 * generator again by a hash of its name (`param:pwm.fswHz`, `device:highSide:vthShiftV`). So
 * adding, removing or reordering parameters never changes the other parameters' draws, and
 * the draws of replicate r are the same in every grid cell (common random numbers: the
 * difference between two cells comes from the grid, not from drawing new builds).
 */
import { Rng } from '../control/rng.ts';
import { type Distribution, draw } from './distributions.ts';
import type { DeviceName, StudySpec } from './spec.ts';

/** What was drawn for one device instance; absent fields were not spread. */
export interface DeviceDraw {
  vthShiftV?: number;
  /** Joint Rds,on scale: rSeries25Ohm × s, kAPerV2 ÷ s. */
  rdsOnScale?: number;
  /** Separate mode: rSeries25Ohm × rSeriesScale, kAPerV2 ÷ channelScale. */
  rSeriesScale?: number;
  channelScale?: number;
  gateChargeScale?: number;
  rthJcScale?: number;
}

export interface SamplePlan {
  readonly index: number;
  /** Seed of this sample (sensor noise in `run`), a 32-bit unsigned integer. */
  readonly seed: number;
  readonly cell: number;
  readonly replicate: number;
  /** Grid values then random draws, by field path. */
  readonly params: Readonly<Record<string, number | string | boolean>>;
  readonly devices?: Readonly<Partial<Record<DeviceName, DeviceDraw>>>;
}

/** FNV-1a 32-bit hash of a string's UTF-16 code units (Fowler, Noll, Vo): a stable stream key. */
export function streamKey(name: string): number {
  let h = 0x811c9dc5;
  for (let k = 0; k < name.length; k++) {
    h ^= name.charCodeAt(k);
    h = Math.imul(h, 0x01000193);
  }
  return h >>> 0;
}

/** The generator of one named quantity in replicate r. */
export function streamOf(studySeed: number, replicate: number, name: string): Rng {
  return new Rng(studySeed).fork(replicate).fork(streamKey(name));
}

function drawNamed(studySeed: number, replicate: number, name: string, d: Distribution): number {
  return draw(d, streamOf(studySeed, replicate, name));
}

export function samplePlan(spec: StudySpec, index: number): SamplePlan {
  if (!Number.isInteger(index) || index < 0 || index >= spec.total)
    throw new RangeError(`sample index must be a whole number from 0 to ${spec.total - 1}, got ${index}`);
  const cell = Math.floor(index / spec.replicates);
  const replicate = index % spec.replicates;
  const params: Record<string, number | string | boolean> = {};
  // First axis slowest: decompose the cell number from the last axis.
  const picks = new Array<number>(spec.grid.length);
  let rest = cell;
  for (let a = spec.grid.length - 1; a >= 0; a--) {
    const n = spec.grid[a].values.length;
    picks[a] = rest % n;
    rest = Math.floor(rest / n);
  }
  spec.grid.forEach((axis, a) => (params[axis.path] = axis.values[picks[a]]));
  for (const [path, d] of Object.entries(spec.random?.params ?? {})) params[path] = drawNamed(spec.seed, replicate, `param:${path}`, d);
  let devices: Partial<Record<DeviceName, DeviceDraw>> | undefined;
  const ds = spec.deviceSpread;
  if (ds) {
    devices = {};
    for (const name of ds.devices) {
      const key = (q: string): string => `device:${name}:${q}`;
      const dd: DeviceDraw = {};
      if (ds.vthShiftV) dd.vthShiftV = drawNamed(spec.seed, replicate, key('vthShiftV'), ds.vthShiftV);
      if (ds.rdsOnScale) {
        if (ds.rdsOnMode === 'joint') dd.rdsOnScale = drawNamed(spec.seed, replicate, key('rdsOnScale'), ds.rdsOnScale);
        else {
          dd.rSeriesScale = drawNamed(spec.seed, replicate, key('rSeriesScale'), ds.rdsOnScale);
          dd.channelScale = drawNamed(spec.seed, replicate, key('channelScale'), ds.rdsOnScale);
        }
      }
      if (ds.gateChargeScale) dd.gateChargeScale = drawNamed(spec.seed, replicate, key('gateChargeScale'), ds.gateChargeScale);
      if (ds.rthJcScale) dd.rthJcScale = drawNamed(spec.seed, replicate, key('rthJcScale'), ds.rthJcScale);
      devices[name] = dd;
    }
  }
  const seed = streamOf(spec.seed, replicate, 'seed').nextUint32();
  return { index, seed, cell, replicate, params, ...(devices ? { devices } : {}) };
}

/** Sample indexes of shard k of n: index mod n = k (strided, so every shard sees every grid cell). */
export function shardIndexes(total: number, shard: { k: number; n: number } | undefined): number[] {
  const out: number[] = [];
  const k = shard?.k ?? 0;
  const n = shard?.n ?? 1;
  for (let i = k; i < total; i += n) out.push(i);
  return out;
}
