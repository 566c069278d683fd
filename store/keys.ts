/**
 * The identity of a stored realisation: its key, a hash of (parameter point, realisation index, master seed).
 * The planner (`study/plan.ts`) gives every realisation this key and the store matches rows by it alone, so two
 * realisations of one point and index made with different master seeds are different rows.
 *
 * Method: SHA-256 of `"spindrift-realisation-v1\n"` followed by the canonical JSON (keys sorted, no
 * whitespace) of `{ index, pointHash, seed }` — the same text `study/hash.ts` `contentHash` builds for this
 * value. Written out here because the store needs it too (migrating version-1 databases recovers each row's
 * master seed by recomputing keys), and the store imports nothing from `study/`.
 *
 * References: NIST FIPS 180-4, Secure Hash Standard (2015), doi:10.6028/NIST.FIPS.180-4.
 *
 * @example
 * ```ts
 * realisationKey("ab12…", 0, "20261201"); // 64 hex characters
 * ```
 */
import { createHash } from "node:crypto";

/** Domain prefix of realisation keys (changing it changes every key). */
export const REALISATION_KEY_DOMAIN = "spindrift-realisation-v1";

/** The key of realisation `index` (from 0) at the point with hash `pointHash`, under master seed `seed`. */
export function realisationKey(pointHash: string, index: number, seed: string): string {
  // Insertion order index, pointHash, seed is the sorted order, so this is the canonical JSON.
  const json = JSON.stringify({ index, pointHash, seed });
  return createHash("sha256").update(`${REALISATION_KEY_DOMAIN}\n${json}`, "utf8").digest("hex");
}
