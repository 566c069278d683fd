/**
 * Per-realisation generator states derived by hashing, so every realisation's random numbers depend only on
 * (master seed, parameter point, realisation index): never on the number of workers, the order in which
 * realisations run, or which other points the study contains.
 *
 * Method: the UTF-8 text `spindrift-seed-v1/<master seed>/<params hash>/<index>` (index in decimal) is hashed
 * with SHA-256. The first 16 bytes of the digest, read as four big-endian 32-bit words, are the full 128-bit
 * xoroshiro128+ state (`engines/random.ts`); each word is stored as a signed 32-bit integer, as pure-rand
 * expects. An all-zero state would make the generator emit zeros forever; should the first 16 bytes be zero
 * (probability 2⁻¹²⁸), the last 16 bytes are used, and should those be zero too the digest is hashed again.
 * The text is unambiguous because the params hash and the index never contain "/". The prefix carries a
 * version: changing anything in this derivation must change the prefix, since it changes every result.
 *
 * Hashing the whole state (instead of seeding with a small integer) avoids the correlated first outputs of
 * xoroshiro-type generators started from nearby low-entropy states; the params hash (not the point's position
 * in the sweep) makes seeds stable when points are added, removed or reordered.
 *
 * References: NIST FIPS 180-4, Secure Hash Standard (2015), doi:10.6028/NIST.FIPS.180-4. D. Blackman,
 * S. Vigna, "Scrambled linear pseudorandom number generators", ACM TOMS 47(4), 36 (2021), doi:10.1145/3460772
 * (§ on seeding: states must not be all zero and should come from a well-mixed source).
 *
 * @example
 * ```ts
 * import { RandomStream } from "../engines/random.ts";
 * const state = deriveSeedState("20261201", point.paramsHash, 3);
 * const rng = RandomStream.fromState(state);
 * ```
 */
import { createHash } from "node:crypto";
import type { GeneratorState } from "../engines/random.ts";

/** Version prefix of the derivation text; part of every derived state. */
export const SEED_DERIVATION_PREFIX = "spindrift-seed-v1";

/** The derivation text hashed for one realisation (exported for documentation and tests). */
export function seedDerivationText(masterSeed: string, paramsHash: string, index: number): string {
  if (!/^[0-9a-f]+$/.test(paramsHash)) {
    throw new RangeError(
      `deriveSeedState: params hash must be lower-case hex, got ${JSON.stringify(paramsHash)}`,
    );
  }
  if (!Number.isSafeInteger(index) || index < 0) {
    throw new RangeError(`deriveSeedState: realisation index must be an integer ≥ 0, got ${index}`);
  }
  return `${SEED_DERIVATION_PREFIX}/${masterSeed}/${paramsHash}/${index}`;
}

/**
 * The 128-bit generator state of realisation `index` at the parameter point with hash `paramsHash`.
 *
 * @param masterSeed the study's master seed as text (integers are written in decimal by the normalizer)
 * @param paramsHash `ParameterPoint.paramsHash` (lower-case hex)
 * @param index realisation index at that point, from 0
 * @throws RangeError when `paramsHash` is not lower-case hex or `index` is not an integer ≥ 0
 */
export function deriveSeedState(masterSeed: string, paramsHash: string, index: number): GeneratorState {
  let digest = createHash("sha256").update(seedDerivationText(masterSeed, paramsHash, index), "utf8")
    .digest();
  for (;;) {
    for (const offset of [0, 16]) {
      const state: GeneratorState = [
        digest.readInt32BE(offset),
        digest.readInt32BE(offset + 4),
        digest.readInt32BE(offset + 8),
        digest.readInt32BE(offset + 12),
      ];
      if (state.some((w) => w !== 0)) return state;
    }
    digest = createHash("sha256").update(digest).digest();
  }
}

/** A generator state as 32 lower-case hex characters (four big-endian 32-bit words), for storage and logs. */
export function seedStateHex(state: GeneratorState): string {
  return state.map((w) => (w >>> 0).toString(16).padStart(8, "0")).join("");
}
