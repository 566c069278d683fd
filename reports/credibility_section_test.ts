import { StudyStore } from "../store/db.ts";
import { recordOnePointStudy } from "../store/_testing.ts";
import { replaceEnsembleResults } from "../store/ensemble.ts";
import { buildCredibilitySection } from "./credibility_section.ts";
import { assert, assertEquals } from "../test/_assert.ts";

function store(dir: string): { store: StudyStore; id: number } {
  const s = StudyStore.open(`${dir}/s.sqlite`);
  return { store: s, id: recordOnePointStudy(s, {}, { pointHash: "pa", label: "count=<24>" }) };
}

Deno.test("buildCredibilitySection: empty without rows; the audit table, flags and non-conserved invariants with reasons", () => {
  const dir = Deno.makeTempDirSync();
  const { store: s, id } = store(dir);
  try {
    const labels = new Map([["pa", "count=<24>"]]);
    assertEquals(buildCredibilitySection(s.db, id, labels), "");
    replaceEnsembleResults(s, id, [
      {
        pointHash: "pa",
        analysis: "audit",
        name: "numerics/summary",
        value: null,
        detail: {
          status: "not-converged",
          pass: "numerics",
          variant: "numerics",
          changes: ["run.tolerance 1e-2 → 1e-3 (÷10)"],
          reasons: ["cluster_radius moves by 0.38"],
          subset: [0, 1, 2],
        },
      },
      {
        pointHash: "pa",
        analysis: "audit",
        name: "numerics/cluster_radius",
        value: -0.38,
        lower: -0.5,
        upper: -0.2,
        detail: {
          quantity: "cluster_radius",
          meanStudy: 1.3,
          meanVariant: 0.92,
          tolerance: 0.05,
          flagged: true,
        },
      },
      {
        pointHash: "pa",
        analysis: "audit",
        name: "settings",
        value: 0.3,
        detail: { auditDb: "s-audit.sqlite", rule: "a rule", accept: 0.01, wallAudit: 3, wallStudy: 10 },
      },
      {
        pointHash: "pa",
        analysis: "invariants",
        name: "summary",
        value: null,
        detail: { status: "not-conserved", reason: "H is not conserved: mutual friction (α = 0.02) acts" },
      },
    ], { analyses: ["audit", "invariants"] });
    const html = buildCredibilitySection(s.db, id, labels);
    assert(html.startsWith('<section id="credibility">'), html.slice(0, 60));
    assert(html.includes("numerics not converged") && html.includes("Flagged:"));
    assert(html.includes("-0.38 [-0.5, -0.2]") && html.includes("✗"));
    assert(html.includes("mutual friction (α = 0.02) acts"), "the reason replaces an empty drift chart");
    assert(html.includes("count=&lt;24&gt;") && !html.includes("count=<24>"), "labels are escaped");
    assert(html.includes("30 %") && html.includes("s-audit.sqlite"));
    assert(!html.includes("<script"));
  } finally {
    s.close();
    Deno.removeSync(dir, { recursive: true });
  }
});
