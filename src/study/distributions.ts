/**
 * Distributions a study draws from, as plain data, and the draw itself. A draw takes one
 * generator and consumes a fixed number of its outputs per distribution kind, so the value
 * depends only on the generator's stream, never on what else the study draws.
 */
import type { Rng } from '../control/rng.ts';

export type Distribution =
  | { readonly dist: 'uniform'; readonly min: number; readonly max: number }
  | { readonly dist: 'normal'; readonly mean: number; readonly sd: number }
  | { readonly dist: 'lognormal'; readonly median: number; readonly sigmaLn: number };

/**
 * One value: uniform on [min, max) (min when min = max); normal mean + sd·z; lognormal
 * median·exp(sigmaLn·z), with z a standard normal deviate (Box–Muller, see control/rng.ts).
 */
export function draw(d: Distribution, rng: Rng): number {
  switch (d.dist) {
    case 'uniform':
      return d.min + (d.max - d.min) * rng.next();
    case 'normal':
      return d.mean + d.sd * rng.normal();
    case 'lognormal':
      return d.median * Math.exp(d.sigmaLn * rng.normal());
  }
}

/** The distribution's central value (used to check a parameter path before a study starts). */
export function centre(d: Distribution): number {
  switch (d.dist) {
    case 'uniform':
      return 0.5 * (d.min + d.max);
    case 'normal':
      return d.mean;
    case 'lognormal':
      return d.median;
  }
}
