import { assert, assertClose } from "../../test/_assert.ts";
import { StudyStore } from "../../store/db.ts";
import { filamentParamsSchema } from "../../engines/filament/mod.ts";
import { RandomStream } from "../../engines/random.ts";
import { chi2FromDecayStudy } from "./decay.ts";
import { AnalysisInputError } from "../errors.ts";
import { tempFile } from "../../test/_tmp.ts";
import { recordOnePointStudy } from "../../store/_testing.ts";

/** Writes a decay-study database whose line length follows Vinen's free decay (with 1 % noise per sample). */
function decayDb(chi2: number, periodic = true): string {
  const path = tempFile(".sqlite");
  const store = StudyStore.open(path);
  const params = filamentParamsSchema.parse({
    units: "dimensionless",
    coreRadius: 0.001,
    resolution: 0.1,
    domain: periodic ? { kind: "periodic", size: 10 } : { kind: "unbounded" },
    initial: { kind: "ring", radius: 1 },
  });
  recordOnePointStudy(store, {
    name: "decay",
    studyHash: "decay-hash",
    normalizedJson: JSON.stringify({ realisations: 4 }),
    engineId: "vortex-filament-3d",
    engineVersion: "1.0.0",
  }, { paramsJson: JSON.stringify(params) });
  const rng = RandomStream.fromState([5, 6, 7, 8]);
  const volume = 1000, L0 = 1, kappa = 1;
  const t = Array.from({ length: 101 }, (_, k) => k * 0.5);
  for (let i = 0; i < 4; i++) {
    const id = store.beginRealisation({
      key: `k${i}`,
      pointHash: "p",
      index: i,
      masterSeed: "1",
      seedHex: "0",
      engineId: "vortex-filament-3d",
      engineVersion: "1.0.0",
      host: "test",
    });
    // Vinen's free decay L(t) = L₀/(1 + χ₂κL₀t/2π): W.F. Vinen, Proc. R. Soc. A 242, 493 (1957) (docs/check-values.md §5).
    const v = t.map((tt) =>
      volume * L0 / (1 + chi2 * kappa * L0 * tt / (2 * Math.PI)) * (1 + 0.01 * rng.normal())
    );
    store.finishRealisation(id, {
      status: "done",
      wallSeconds: 0,
      simTimeReached: 50,
      scalars: {},
      series: { "diag.line_length": { t, v } },
      events: [],
    });
  }
  store.close();
  return path;
}

Deno.test("chi2FromDecayStudy recovers χ₂ of an exact Vinen free decay within its interval", () => {
  const est = chi2FromDecayStudy(decayDb(0.3), { replicates: 400 });
  assertClose(est.chi2, 0.3, 0.03, "χ₂");
  assert(est.interval !== null && est.interval[0] <= 0.3 && 0.3 <= est.interval[1], JSON.stringify(est));
  assert(est.source.includes("diag.line_length"), est.source);
});

Deno.test("chi2FromDecayStudy refuses a study without a periodic box, with the reason", () => {
  let message = "";
  try {
    chi2FromDecayStudy(decayDb(0.3, false));
  } catch (e) {
    assert(e instanceof AnalysisInputError);
    message = e.message;
  }
  assert(message.includes("periodic"), message);
});
