/**
 * Seeded random streams for engines and initial conditions.
 *
 * Every realisation gets a 128-bit generator state derived by hashing (see `study/seeds.ts`), never a
 * small integer seed, and never `Math.random`.
 *
 * Method: xoroshiro128+ from pure-rand (32-bit arithmetic). A double in [0, 1) takes the top 26 bits of one
 * output and the top 27 bits of the next (53 bits in all; the weak low bits of xoroshiro128+ are dropped).
 * Normals by the Box–Muller transform.
 *
 * References: D. Blackman, S. Vigna, "Scrambled linear pseudorandom number generators", ACM TOMS 47(4), 36
 * (2021), doi:10.1145/3460772. G.E.P. Box, M.E. Muller, Ann. Math. Stat. 29, 610 (1958),
 * doi:10.1214/aoms/1177706645.
 *
 * @example
 * ```ts
 * const rng = RandomStream.fromState([1, 2, 3, 4]);
 * const u = rng.uniform(); // in [0, 1)
 * ```
 */
import { xoroshiro128plusFromState } from "pure-rand/generator/xoroshiro128plus";

/** Four signed 32-bit words: the full xoroshiro128+ state. */
export type GeneratorState = readonly [number, number, number, number];

type Xoroshiro = ReturnType<typeof xoroshiro128plusFromState>;

/** A mutable stream of uniform and normal deviates over one seeded generator. */
export class RandomStream {
  #gen: Xoroshiro;
  #spare = 0;
  #hasSpare = false;

  private constructor(gen: Xoroshiro) {
    this.#gen = gen;
  }

  /** Starts a stream from a full 128-bit state; an all-zero state is refused (the generator would stall). */
  static fromState(state: GeneratorState): RandomStream {
    if (state.every((w) => (w | 0) === 0)) throw new RangeError("generator state must not be all zero");
    return new RandomStream(
      xoroshiro128plusFromState([state[0] | 0, state[1] | 0, state[2] | 0, state[3] | 0]),
    );
  }

  /** Uniform double in [0, 1) with 53 random bits. */
  uniform(): number {
    const a = this.#gen.next() >>> 6; // 26 bits
    const b = this.#gen.next() >>> 5; // 27 bits
    return (a * 134217728 + b) / 9007199254740992;
  }

  /** Uniform double in (0, 1]: safe as the argument of a logarithm. */
  uniformPositive(): number {
    return 1 - this.uniform();
  }

  /** Standard normal deviate (Box–Muller; the second value of each pair is kept for the next call). */
  normal(): number {
    if (this.#hasSpare) {
      this.#hasSpare = false;
      return this.#spare;
    }
    const r = Math.sqrt(-2 * Math.log(this.uniformPositive()));
    const phi = 2 * Math.PI * this.uniform();
    this.#spare = r * Math.sin(phi);
    this.#hasSpare = true;
    return r * Math.cos(phi);
  }

  /** Uniform integer in [0, n) for n ≥ 1 (n < 2^53). */
  integer(n: number): number {
    return Math.floor(this.uniform() * n);
  }

  /** Fisher–Yates shuffle in place (Knuth, TAOCP vol. 2, §3.4.2, algorithm P). */
  shuffle<T extends { length: number; [i: number]: unknown }>(a: T): T {
    for (let i = a.length - 1; i > 0; i--) {
      const j = this.integer(i + 1);
      const t = a[i];
      a[i] = a[j];
      a[j] = t;
    }
    return a;
  }

  /** The current full state, so a stream can be resumed or recorded. */
  state(): GeneratorState {
    const s = this.#gen.getState() as number[];
    return [s[0], s[1], s[2], s[3]];
  }
}
