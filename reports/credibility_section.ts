/**
 * Report section "Numerical credibility": would the answer move with finer numerics, are the invariants kept,
 * and with which settings — read from the ensemble rows other commands store (`audit` from `spindrift audit`,
 * `invariants` from `spindrift analyse`, `pilot` from `spindrift pilot`, `precision` from `run --until`; names
 * in DEVELOPERS.md). Self-contained HTML, no script; the page builder inserts it as is. Without any of those
 * rows the section says which command fills it.
 *
 * @example
 * ```ts
 * const html = buildCredibilitySection(db, studyId, pointLabels);
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import { type EnsembleResult, readEnsembleResults } from "../store/ensemble.ts";
import { escapeHtml, formatNumber } from "./html.ts";

type Detail = Readonly<Record<string, unknown>>;

function num(v: unknown): number | null {
  return typeof v === "number" && Number.isFinite(v) ? v : null;
}

function n(v: unknown): string {
  const x = num(v);
  return x === null ? "—" : formatNumber(x);
}

function text(v: unknown): string {
  return escapeHtml(typeof v === "string" ? v : "");
}

function list(v: unknown): string[] {
  return Array.isArray(v) ? v.map((x) => String(x)) : [];
}

/** Point labels by hash, in sweep order. */
export type PointLabels = ReadonlyMap<string, string>;

const VERDICT: Readonly<Record<string, string>> = {
  converged: "converged",
  "not-converged": '<span class="cred-flag">numerics not converged</span>',
  insensitive: "insensitive",
  sensitive: '<span class="cred-flag">sensitive</span>',
  inconclusive: "inconclusive: nothing moved, but the pairs cannot resolve the study's precision",
  "not-applicable": "not applicable",
};

function auditPart(rows: readonly EnsembleResult[], labels: PointLabels): string {
  const summaries = rows.filter((r) => r.name.endsWith("/summary"));
  if (summaries.length === 0) {
    return `<h3>Audit</h3><p class="note">No audit yet: <code>spindrift audit DATABASE</code> reruns a subset of
each point's realisations with the same seeds and finer numerics (<code>--pass physics</code>: the annihilation
or reconnection distance halved and doubled) and compares them pair by pair.</p>`;
  }
  const settings = rows.find((r) => r.name === "settings");
  const blocks: string[] = [];
  for (const [hash, label] of labels) {
    // Numerics first, then physics; each pass in the engine's table order is not stored, so by name.
    const mine = summaries.filter((r) => r.pointHash === hash).sort((a, b) =>
      String(b.detail.pass).localeCompare(String(a.detail.pass)) || a.name.localeCompare(b.name)
    );
    if (mine.length === 0) continue;
    const body = mine.map((s) => {
      const d = s.detail;
      const variant = String(d.variant ?? "");
      const comps = rows.filter((r) => r.pointHash === hash && r.name.startsWith(`${variant}/`) && r !== s);
      const head = `<tr class="cred-variant"><th colspan="6">${escapeHtml(variant)} — ${
        VERDICT[String(d.status)] ?? text(d.status)
      }${list(d.subset).length > 0 ? `, ${list(d.subset).length} pairs` : ""}<br><span class="cred-changes">${
        list(d.changes).map(escapeHtml).join("; ") || ""
      }</span></th></tr>`;
      const lines = comps.map((c) => {
        const x = c.detail;
        return `<tr${x.flagged ? ' class="cred-flagged"' : ""}><td>${
          escapeHtml(String(x.quantity))
        }</td><td>${n(x.meanStudy)}</td><td>${n(x.meanVariant)}</td><td>${n(c.value)} [${n(c.lower)}, ${
          n(c.upper)
        }]</td><td>±${n(x.tolerance)}</td><td>${
          x.flagged ? "✗" : x.resolvable === false ? "not resolvable" : ""
        }</td></tr>`;
      });
      const why = list(d.reasons).map((r) => `<li>${escapeHtml(r)}</li>`).join("");
      return head + lines.join("") +
        (why ? `<tr><td colspan="6"><ul class="cred-why">${why}</ul></td></tr>` : "");
    }).join("");
    blocks.push(`<h4>${escapeHtml(label)}</h4>
<table class="cred"><thead><tr><th>quantity</th><th>study</th><th>variant</th><th>Δ = variant − study [95 %]</th>
<th>counts beyond</th><th>flag</th></tr></thead><tbody>${body}</tbody></table>`);
  }
  const sd = settings?.detail ?? {};
  const cost = num(settings?.value);
  return `<h3>Audit</h3>
<p class="note">Each row compares the same realisations (same seeds) run with the study's numerics and with the
variant: means over the audited pairs and the paired difference with Student's t interval (D: the same bootstrap
draws on both sides). Flag: ${text(sd.rule)}. “Counts beyond” is that tolerance: max(one standard error of the
study's own estimate, ${n(num(sd.accept) !== null ? 100 * num(sd.accept)! : null)} % of its value).</p>
${blocks.join("\n")}
<p class="note">Reruns stored apart from the study in <code>${text(sd.auditDb)}</code>; they never enter the
study's estimates. Cost: ${cost === null ? "—" : `${Math.round(100 * cost)} %`} of the study's wall time (${
    n(sd.wallAudit)
  } s for ${n(sd.wallStudy)} s).${list(sd.notes).map((x) => ` ${escapeHtml(x)}.`).join("")}</p>`;
}

function invariantsPart(rows: readonly EnsembleResult[], labels: PointLabels): string {
  if (rows.length === 0) {
    return `<h3>Invariants</h3><p class="note">Not checked yet: <code>spindrift analyse</code> checks the
stored drifts of conserved quantities against the engine's thresholds.</p>`;
  }
  const body: string[] = [];
  for (const [hash, label] of labels) {
    const summary = rows.find((r) => r.pointHash === hash && r.name === "summary");
    if (!summary) continue;
    const s = summary.detail;
    const checks = rows.filter((r) => r.pointHash === hash && r.name !== "summary");
    if (checks.length === 0 || s.status === "not-conserved" || s.status === "not-available") {
      body.push(`<tr><td>${escapeHtml(label)}</td><td colspan="5">${text(s.reason)}</td></tr>`);
    }
    for (const c of checks) {
      const d = c.detail;
      const flagged = Array.isArray(d.flagged) ? d.flagged as { index: number; drift: number }[] : [];
      const skipped = Array.isArray(d.skipped) ? d.skipped as { reason: string; count: number }[] : [];
      body.push(
        `<tr${flagged.length > 0 ? ' class="cred-flagged"' : ""}><td>${escapeHtml(label)}</td><td>${
          text(d.quantity)
        }</td><td>${n(d.threshold)}</td><td>${n(c.value)} (median ${n(d.medianDrift)})</td><td>${
          num(d.checked) ?? 0
        }${skipped.map((k) => `; ${k.count} not checked: ${escapeHtml(k.reason)}`).join("")}</td><td>${
          flagged.length === 0
            ? "none"
            : `<span class="cred-flag">${flagged.length}</span>: realisations ${
              flagged.slice(0, 12).map((f) => f.index).join(", ")
            }${flagged.length > 12 ? ", …" : ""}`
        }</td></tr>`,
      );
    }
    for (const note of list(s.notes)) {
      body.push(`<tr><td>${escapeHtml(label)}</td><td colspan="5">${escapeHtml(note)}</td></tr>`);
    }
  }
  const basis = [
    ...new Set(rows.map((r) => r.detail.basis).filter((b) => typeof b === "string")),
  ] as string[];
  return `<h3>Invariants</h3>
<table class="cred"><thead><tr><th>point</th><th>invariant</th><th>threshold</th><th>largest relative drift</th>
<th>realisations checked</th><th>above the threshold</th></tr></thead><tbody>${body.join("")}</tbody></table>
${
    basis.length > 0
      ? `<p class="note">Thresholds: ${
        basis.map(escapeHtml).join("; ")
      }. Where a quantity is not conserved the
row says why instead of showing a drift.</p>`
      : ""
  }`;
}

function settingsPart(
  audit: readonly EnsembleResult[],
  pilot: readonly EnsembleResult[],
  precision: readonly EnsembleResult[],
  labels: PointLabels,
): string {
  const items: string[] = [];
  const seen = new Set<string>();
  for (const s of audit.filter((r) => r.name.endsWith("/summary"))) {
    const key = `${s.detail.variant}: ${list(s.detail.changes).join("; ")}`;
    if (seen.has(key) || list(s.detail.changes).length === 0) continue;
    seen.add(key);
    items.push(
      `<li>${s.detail.pass === "physics" ? "physics" : "numerics"} variant ${escapeHtml(key)}${
        audit.filter((r) =>
            r.name === s.name && list(r.detail.changes).join("; ") === list(s.detail.changes).join("; ")
          )
            .length < labels.size
          ? ` (at ${escapeHtml(labels.get(s.pointHash) ?? "?")})`
          : ""
      }</li>`,
    );
  }
  const proj = pilot.find((r) => r.name === "projection");
  if (proj) {
    const t = (proj.detail.totals ?? {}) as Detail;
    const rec = proj.detail.recommendation as Detail | null;
    const slurm = (t.slurm ?? {}) as Detail;
    items.push(
      `<li>pilot (${escapeHtml(proj.computedAt)}): ${
        n(proj.detail.pilotSize)
      } realisations per point; rest of the
study ≈ ${n(proj.value)} s with ${n(proj.detail.workers)} workers, ${
        n(t.databaseBytes)
      } bytes of database; Slurm
array of ${n(slurm.tasks)} tasks, --time-limit ${text(slurm.timeLimit)} --memory ${text(slurm.memory)}${
        rec ? `; recommended ${n(rec.N)} realisations per point (${text(rec.result)})` : ""
      }</li>`,
    );
  }
  for (const p of precision) {
    const d = p.detail;
    items.push(
      `<li>run until precise (${escapeHtml(labels.get(p.pointHash) ?? "?")}): ${escapeHtml(p.name)} = ${
        n(p.value)
      } [${n(p.lower)}, ${n(p.upper)}] with ${n(d.used)} realisations (first stage ${n(d.n0)}, Stein's rule
needed ${n(d.required)}${d.reachable === false ? ", capped" : ""})${
        d.reason ? `: ${text(d.reason)}` : ""
      }</li>`,
    );
  }
  if (items.length === 0) return "";
  return `<h3>Settings and plans</h3><ul class="cred-settings">${items.join("")}</ul>`;
}

/** The section's HTML, or "" when the study has none of the rows (nothing to say). */
export function buildCredibilitySection(db: DatabaseSync, studyId: number, labels: PointLabels): string {
  const audit = readEnsembleResults(db, studyId, { analysis: "audit" });
  const invariants = readEnsembleResults(db, studyId, { analysis: "invariants" });
  const pilot = readEnsembleResults(db, studyId, { analysis: "pilot" });
  const precision = readEnsembleResults(db, studyId, { analysis: "precision" });
  if (audit.length + invariants.length + pilot.length + precision.length === 0) return "";
  const flagged = audit.some((r) => r.name.endsWith("/summary") && r.detail.status === "not-converged") ||
    invariants.some((r) => r.name === "summary" && r.detail.status === "flagged");
  const inconclusive = audit.some((r) => r.name.endsWith("/summary") && r.detail.status === "inconclusive");
  return `<section id="credibility">
<h2>Numerical credibility</h2>
<p class="note">${
    flagged
      ? '<span class="cred-flag">Flagged:</span> some result moves with finer numerics or breaks an invariant; see below.'
      : inconclusive
      ? "Nothing flagged, but the audit is inconclusive: its pairs cannot resolve shifts of the study's " +
        "precision (see below for what they can bound)."
      : "Nothing flagged in what was checked (see below for what was and what was not)."
  }</p>
${auditPart(audit, labels)}
${invariantsPart(invariants, labels)}
${settingsPart(audit, pilot, precision, labels)}
</section>
`;
}

/** Style rules of the section (added to the page's style sheet). */
export const CREDIBILITY_STYLE = `
table.cred { border-collapse: collapse; margin: 8px 0 16px; font-size: 14px; }
table.cred th, table.cred td { border-bottom: 1px solid #e3e6ea; padding: 3px 8px; text-align: left; vertical-align: top; }
tr.cred-variant th { background: #f4f6f8; font-weight: 600; }
.cred-changes { font-weight: normal; color: var(--muted); font-size: 13px; }
tr.cred-flagged td { background: #fff4f2; }
.cred-flag { color: #b3261e; font-weight: 600; }
ul.cred-why { margin: 2px 0; color: var(--muted); font-size: 13px; }
`;
