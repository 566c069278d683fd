/**
 * The `invariants` rows of `spindrift analyse`: the relative drifts of conserved quantities that engines store
 * (`drift.*` scalars) checked against the thresholds the engine states (`Engine.conservation`), with every
 * realisation above its threshold named; where friction, damping, a wall or a flow make a quantity
 * non-conserved the rows say so and why, so the report never shows an empty chart without a reason.
 *
 * Rows (per point): `summary` (status `ok` | `flagged` | `not-conserved` | `not-available`; detail: `reason`,
 * `notConserved`, `notes`) and one row per checked invariant, named after its scalar without `drift.`
 * (value = the largest drift among the checked realisations; detail: `threshold`, `basis`, `checked`,
 * `skipped`, `flagged` [{ id, index, drift }], `median`, `status`).
 */
import type { ConservationCheck } from "../../engines/contract.ts";
import { findEngine } from "../../engines/registry.ts";
import { readScalars } from "../../store/reads.ts";
import { readControls } from "../from_store/series.ts";
import type { PointContext, Push } from "./rows.ts";

/** One checked invariant of a point. */
export interface InvariantResult {
  readonly scalar: string;
  readonly quantity: string;
  readonly threshold: number;
  readonly basis: string;
  /** "ok": every checked realisation within the threshold; "not-recorded": none stored the drift. */
  readonly status: "ok" | "flagged" | "not-recorded";
  readonly checked: number;
  /** Realisations left out, with why (e.g. reconnections changed the energy). */
  readonly skipped: readonly { readonly reason: string; readonly count: number }[];
  readonly maxDrift: number | null;
  readonly medianDrift: number | null;
  readonly flagged: readonly { readonly id: number; readonly index: number; readonly drift: number }[];
}

/** What `analyse` reports about invariants at one point. */
export interface InvariantsAnalysis {
  readonly status: "ok" | "flagged" | "not-conserved" | "not-available";
  readonly reason: string | null;
  readonly invariants: readonly InvariantResult[];
  readonly notConserved: ConservationCheck["notConserved"];
  readonly notes: readonly string[];
}

/** One realisation's scalars, with its index within the point. */
export interface RealisationScalars {
  readonly id: number;
  readonly index: number;
  readonly scalars: Readonly<Record<string, number>>;
}

/** Checks the stored drifts against the engine's statement (pure; see the module comment). */
export function checkInvariants(
  check: ConservationCheck,
  realisations: readonly RealisationScalars[],
): InvariantsAnalysis {
  const invariants = check.invariants.map((inv): InvariantResult => {
    const drifts: number[] = [];
    const flagged: { id: number; index: number; drift: number }[] = [];
    const skipped = new Map<string, number>();
    for (const r of realisations) {
      const skip = inv.unlessNonzero?.find((u) => (r.scalars[u.scalar] ?? 0) !== 0);
      if (skip) {
        skipped.set(skip.reason, (skipped.get(skip.reason) ?? 0) + 1);
        continue;
      }
      const v = r.scalars[inv.scalar];
      if (v === undefined) continue;
      const d = Number.isFinite(v) ? Math.abs(v) : Number.POSITIVE_INFINITY;
      drifts.push(d);
      if (!(d <= inv.threshold)) flagged.push({ id: r.id, index: r.index, drift: d });
    }
    drifts.sort((a, b) => a - b);
    return {
      scalar: inv.scalar,
      quantity: inv.quantity,
      threshold: inv.threshold,
      basis: inv.basis,
      status: drifts.length === 0 ? "not-recorded" : flagged.length > 0 ? "flagged" : "ok",
      checked: drifts.length,
      skipped: [...skipped].map(([reason, count]) => ({ reason, count })),
      maxDrift: drifts.length > 0 ? drifts[drifts.length - 1] : null,
      medianDrift: drifts.length > 0 ? drifts[(drifts.length - 1) >> 1] : null,
      flagged: flagged.sort((a, b) => a.index - b.index),
    };
  });
  const status = invariants.some((i) => i.status === "flagged")
    ? "flagged"
    : invariants.some((i) => i.status === "ok")
    ? "ok"
    : check.notConserved.length > 0
    ? "not-conserved"
    : "not-available";
  let reason: string | null = null;
  if (status === "flagged") {
    reason = invariants.filter((i) => i.status === "flagged").map((i) =>
      `${i.quantity}: ${i.flagged.length} of ${i.checked} realisations drift by more than ${i.threshold}`
    ).join("; ");
  } else if (status === "not-conserved") {
    const byReason = new Map<string, string[]>();
    for (const n of check.notConserved) {
      byReason.set(n.reason, [...(byReason.get(n.reason) ?? []), n.quantity]);
    }
    reason = [...byReason].map(([why, qs]) =>
      `${qs.join(", ")} ${qs.length === 1 ? "is" : "are"} not conserved: ${why}`
    )
      .join("; ");
  } else if (status === "not-available") {
    reason = invariants.length > 0
      ? "no realisation recorded a drift that can be checked" +
        (invariants.some((i) => i.skipped.length > 0)
          ? ` (${invariants.flatMap((i) => i.skipped.map((s) => s.reason))[0]})`
          : "")
      : "the engine states no conserved quantity for these parameters";
  }
  return { status, reason, invariants, notConserved: check.notConserved, notes: check.notes ?? [] };
}

/** One line per point for `analyse` (e.g. "invariants: Hamiltonian H drift ≤ 3e-9 in 64 of 64 (threshold 1e-6)"). */
export function invariantsText(a: InvariantsAnalysis): string {
  if (a.status === "not-conserved" || a.status === "not-available") return `invariants: ${a.reason}`;
  const parts = a.invariants.filter((i) => i.status !== "not-recorded").map((i) =>
    `${i.quantity} drift ≤ ${i.maxDrift === null ? "—" : i.maxDrift.toExponential(1)} in ${i.checked}` +
    ` (threshold ${i.threshold}${
      i.flagged.length > 0
        ? `; FLAGGED: realisation${i.flagged.length === 1 ? "" : "s"} ${
          i.flagged.slice(0, 8).map((f) => f.index).join(", ")
        }${i.flagged.length > 8 ? ", …" : ""}`
        : ""
    })`
  );
  return `invariants: ${parts.join("; ")}`;
}

/** Computes and pushes the `invariants` rows of one point. */
export function invariantRows(ctx: PointContext, push: Push): InvariantsAnalysis {
  const engine = findEngine(ctx.study.engineId);
  let result: InvariantsAnalysis;
  if (!engine?.conservation) {
    result = {
      status: "not-available",
      reason: engine
        ? `the engine ${engine.id} states no conserved quantities (e.g. imported tracks)`
        : `engine ${ctx.study.engineId} is not in this build`,
      invariants: [],
      notConserved: [],
      notes: [],
    };
  } else {
    const check = engine.conservation(ctx.point.params as never, readControls(ctx.point.controls));
    const scalars = readScalars(ctx.db, ctx.ids);
    const indexOf = new Map<number, number>();
    const stmt = ctx.db.prepare("SELECT idx FROM realisations WHERE id = ?");
    for (const id of ctx.ids) indexOf.set(id, Number((stmt.get(id) as { idx: number }).idx));
    result = checkInvariants(
      check,
      ctx.ids.map((id) => ({ id, index: indexOf.get(id)!, scalars: scalars.get(id) ?? {} })),
    );
  }
  push("invariants", "summary", {
    value: null,
    detail: {
      status: result.status,
      reason: result.reason,
      notConserved: result.notConserved,
      notes: result.notes,
      rule: "relative drift of each conserved quantity (as the engine reports it) ≤ the engine's stated " +
        "threshold, in every realisation",
    },
  });
  for (const i of result.invariants) {
    push("invariants", i.scalar.replace(/^drift\./, ""), {
      value: i.maxDrift,
      detail: {
        status: i.status,
        quantity: i.quantity,
        threshold: i.threshold,
        basis: i.basis,
        checked: i.checked,
        skipped: i.skipped,
        medianDrift: i.medianDrift,
        flagged: i.flagged,
      },
    });
  }
  return result;
}
