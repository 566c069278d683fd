/**
 * The seed an external program receives: a 64-bit integer drawn from the realisation's own stream, so it
 * depends only on (master seed, parameter point, realisation index), like every built-in engine's numbers.
 *
 * Method: with u₁, u₂ the first two `uniform()` draws of the realisation's `RandomStream` (each a double with 53
 * random bits, see `engines/random.ts`),
 *
 *   high = ⌊2³² u₁⌋,  low = ⌊2³² u₂⌋,  seed = high · 2³² + low   (0 ≤ seed < 2⁶⁴),  seed32 = high.
 *
 * Each half takes the top 32 of the 53 bits, i.e. the high bits of the xoroshiro128+ outputs (its weak low bits
 * are never used). `{seed}` is the decimal text of `seed`; `{seed32}` that of `high`, for programs that take
 * 32-bit seeds. Programs should feed the seed through a mixing step (e.g. SplitMix64) before seeding a
 * generator, as the stand-in program `test/external/walker.mjs` does.
 *
 * References: D. Blackman, S. Vigna, "Scrambled linear pseudorandom number generators", ACM TOMS 47(4), 36
 * (2021), doi:10.1145/3460772 (xoroshiro128+, its low bits). G.L. Steele, D. Lea, C.H. Flood, "Fast splittable
 * pseudorandom number generators", OOPSLA 2014, doi:10.1145/2660193.2660195 (SplitMix64).
 *
 * @example
 * ```ts
 * const s = programSeed(RandomStream.fromState(state));
 * s.text; // e.g. "13725400710435167232"
 * ```
 */
import type { RandomStream } from "../random.ts";

/** A program seed in the forms placeholders and records need. */
export interface ProgramSeed {
  /** The 64-bit seed. */
  readonly seed: bigint;
  /** Its high and low 32-bit halves (exact as doubles). */
  readonly high: number;
  readonly low: number;
  /** Decimal text of `seed` ({seed}). */
  readonly text: string;
  /** Decimal text of `high` ({seed32}). */
  readonly text32: string;
}

const TWO_32 = 4294967296;

/** Draws the program seed: the first two uniforms of `rng` (see the module documentation). */
export function programSeed(rng: RandomStream): ProgramSeed {
  const high = Math.floor(rng.uniform() * TWO_32);
  const low = Math.floor(rng.uniform() * TWO_32);
  const seed = (BigInt(high) << 32n) | BigInt(low);
  return { seed, high, low, text: seed.toString(), text32: String(high) };
}
