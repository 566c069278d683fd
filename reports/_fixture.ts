/**
 * Test fixtures: writes a study database row by row with plain SQL, following `store/schema.ts`, so report
 * tests do not depend on the runner. `syntheticStudy` makes a small two-point study with smooth,
 * deterministic curves (no randomness), a failed and an unfinished realisation, drift scalars and events;
 * `hostile: true` puts HTML and script text in every user-controlled string.
 */
import { createHash } from "node:crypto";
import { DatabaseSync } from "node:sqlite";
import { SCHEMA_SQL, SCHEMA_VERSION } from "../store/schema.ts";
import { openStoreReadOnly } from "../store/reads.ts";
import { aggregateStudy, type StudyAggregate } from "./aggregate.ts";

export interface FixtureRealisation {
  readonly index: number;
  readonly status: "done" | "failed" | "running";
  readonly failureKind?: string;
  readonly error?: string;
  /** Values per frame k (t = k · sampleInterval); null stores SQL NULL. */
  readonly series?: Readonly<Record<string, readonly (number | null)[]>>;
  readonly scalars?: Readonly<Record<string, number>>;
  /** Event kinds, one entry per event. */
  readonly events?: readonly string[];
  readonly simTimeReached?: number;
  readonly wallSeconds?: number;
}

export interface FixturePoint {
  readonly label: string;
  readonly varied: Readonly<Record<string, unknown>>;
  readonly params: unknown;
  readonly realisations: readonly FixtureRealisation[];
}

export interface FixtureStudy {
  readonly name: string;
  readonly description: string;
  readonly text: string;
  readonly realisations: number;
  readonly seed: string;
  readonly sampleInterval: number;
  readonly duration: number;
  readonly points: readonly FixturePoint[];
}

const ENGINE = { id: "point-vortex-2d", version: "1.0.0" };
const CREATED = "2026-01-15T10:00:00.000Z";

function sha(text: string): string {
  return createHash("sha256").update(text).digest("hex");
}

/** Creates `path` (which must not exist) and writes the study as revision 1. Returns the study id. */
export function writeFixtureDb(path: string, study: FixtureStudy): number {
  const db = new DatabaseSync(path);
  try {
    db.exec("PRAGMA synchronous = OFF"); // a throw-away test file: no need to wait for the disk
    db.exec(SCHEMA_SQL);
    db.exec("BEGIN");
    db.prepare("INSERT INTO meta (key, value) VALUES ('schema_version', ?)").run(String(SCHEMA_VERSION));
    const run = {
      duration: study.duration,
      sampleInterval: study.sampleInterval,
      tolerance: 1e-9,
      maxDistance: 1e6,
    };
    const observables = {
      record: ["cluster", "evaporation", "msd"],
      classification: {
        separationFactor: 0.3,
        radiusFactor: 2,
        stickyFrames: 3,
        outwardCosine: 0.5,
        speedTolerance: 0.25,
      },
    };
    const normalized = {
      name: study.name,
      description: study.description,
      engine: ENGINE,
      realisations: study.realisations,
      seed: study.seed,
      run,
      observables,
    };
    const studyHash = sha(JSON.stringify(normalized));
    const studyId = Number(
      db.prepare(
        `INSERT INTO studies (name, description, study_hash, source_path, text, normalized_json, engine_id,
           engine_version, tool_version, deno_version, git_commit, created_at, last_run_at)
         VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
      ).run(
        study.name,
        study.description,
        studyHash,
        `studies/${study.name}.yaml`,
        study.text,
        JSON.stringify(normalized),
        ENGINE.id,
        ENGINE.version,
        "0.1.0",
        "2.9.6",
        "0123456789abcdef0123456789abcdef01234567",
        CREATED,
        "2026-01-15T10:05:00.000Z",
      ).lastInsertRowid,
    );
    const insPoint = db.prepare(
      `INSERT INTO points (point_hash, params_hash, engine_id, engine_version, params_json, controls_json,
         created_at) VALUES (?, ?, ?, ?, ?, ?, ?)`,
    );
    const insStudyPoint = db.prepare(
      "INSERT INTO study_points (study_id, point_index, point_hash, label, varied_json) VALUES (?, ?, ?, ?, ?)",
    );
    const insReal = db.prepare(
      `INSERT INTO realisations (realisation_key, point_hash, idx, seed, status, failure_kind, error, engine_id,
         engine_version, started_at, finished_at, wall_seconds, sim_time_reached, frame_count, host)
       VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`,
    );
    const insSeries = db.prepare(
      "INSERT INTO series (realisation_id, name, k, t, value) VALUES (?, ?, ?, ?, ?)",
    );
    const insScalar = db.prepare("INSERT INTO scalars (realisation_id, name, value) VALUES (?, ?, ?)");
    const insEvent = db.prepare(
      "INSERT INTO events (realisation_id, seq, t, kind, ids_json, data_json) VALUES (?, ?, ?, ?, ?, ?)",
    );
    study.points.forEach((p, pointIndex) => {
      const paramsJson = JSON.stringify(p.params);
      const paramsHash = sha(`${ENGINE.id}/${paramsJson}`);
      const pointHash = sha(`${ENGINE.id}/${ENGINE.version}/${paramsJson}/${JSON.stringify(run)}`);
      insPoint.run(
        pointHash,
        paramsHash,
        ENGINE.id,
        ENGINE.version,
        paramsJson,
        JSON.stringify({ run, observables }),
        CREATED,
      );
      insStudyPoint.run(studyId, pointIndex, pointHash, p.label, JSON.stringify(p.varied));
      for (const r of p.realisations) {
        const seed = sha(`${study.seed}/${paramsHash}/${r.index}`).slice(0, 32);
        const frames = Math.max(0, ...Object.values(r.series ?? {}).map((v) => v.length));
        const finished = r.status === "running" ? null : "2026-01-15T10:04:00.000Z";
        const id = Number(
          insReal.run(
            sha(`${pointHash}/${r.index}/${study.seed}`),
            pointHash,
            r.index,
            seed,
            r.status,
            r.failureKind ?? null,
            r.error ?? null,
            ENGINE.id,
            ENGINE.version,
            "2026-01-15T10:01:00.000Z",
            finished,
            r.wallSeconds ?? (r.status === "running" ? null : 12.5),
            r.simTimeReached ?? (r.status === "done" ? study.duration : null),
            r.status === "running" ? null : frames,
            "fixture-host",
          ).lastInsertRowid,
        );
        for (const [name, values] of Object.entries(r.series ?? {})) {
          values.forEach((v, k) => insSeries.run(id, name, k, k * study.sampleInterval, v));
        }
        for (const [name, v] of Object.entries(r.scalars ?? {})) insScalar.run(id, name, v);
        (r.events ?? []).forEach((kind, seq) =>
          insEvent.run(id, seq, (seq + 1) * study.sampleInterval, kind, "[1,2]", "{}")
        );
      }
    });
    db.exec("COMMIT");
    return studyId;
  } finally {
    db.close();
  }
}

/**
 * A small two-point study. Realisation r of point p has, at t = k·Δt (Δt = 0.5, k = 0..frames−1):
 * msd = 4·D·[t − τ(1 − e^{−t/τ})] (the 2D Ornstein–Uhlenbeck form, docs/check-values.md §6.1) with D = D_p·(1 + 0.1·(r − 1)),
 * R_rms = √(R₀² + 4Dt), evaporated = ⌊c·(1 − e^{−t/5})⌋. Point 0 has a failed and point 1 an unfinished
 * realisation.
 */
export function syntheticStudy(opts: { hostile?: boolean; frames?: number } = {}): FixtureStudy {
  const hostile = opts.hostile ?? false;
  const frames = opts.frames ?? 41;
  const dt = 0.5;
  const tau = 0.8;
  const mk = (dp: number, r0: number, c: number, r: number): FixtureRealisation => {
    const d = dp * (1 + 0.1 * (r - 1));
    const msd: number[] = [];
    const rms: number[] = [];
    const evap: number[] = [];
    const h: number[] = [];
    for (let k = 0; k < frames; k++) {
      const t = k * dt;
      msd.push(4 * d * (t - tau * (1 - Math.exp(-t / tau))));
      rms.push(Math.sqrt(r0 * r0 + 4 * d * t));
      evap.push(Math.floor((c + r) * (1 - Math.exp(-t / 5))));
      h.push(-12.5 + 1e-10 * k * (r + 1));
    }
    return {
      index: r,
      status: "done",
      series: { msd, cluster_rms_radius: rms, evaporated_count: evap, "diag.hamiltonian": h },
      scalars: {
        "drift.hamiltonian": 2e-10 * (r + 1),
        "drift.impulse": r === 0 ? 0 : -3e-12 * (r + 1),
        "drift.angular_impulse": 5e-11 * (r + 2),
        steps: 1000 + 17 * r,
        evaporated_final: evap[evap.length - 1],
      },
      events: r % 2 === 0 ? ["annihilation", "annihilation", "evaporation"] : ["evaporation"],
    };
  };
  const xss = "<script>document.body.dataset.pwned='1'</script>";
  const img = `<img src=x onerror="document.body.dataset.pwned='1'">`;
  const name = hostile ? `film-patch${xss}` : "film-patch";
  const description = hostile
    ? `Does D depend on N? ${xss} ${img} & "quotes" 'single' </pre></script><!--`
    : "How fast does a localised cloud of N point vortices spread, and does the effective diffusion " +
      "coefficient D depend on N?\nTwo cloud sizes, four realisations each.";
  const labelA = hostile ? `initial.count=32 ${img}` : "initial.count=32";
  const labelB = hostile ? "initial.count=64 </script><b>bold</b>" : "initial.count=64";
  const params = (n: number) => ({
    lengthUnit: "ℓ",
    domain: { kind: "unbounded" },
    initial: {
      kind: "random-cloud",
      count: n,
      polarity: 0,
      shape: "uniform-disk",
      radius: 4,
      centre: [0, 0],
    },
    friction: { alpha: 0, alphaPrime: 0, normalVelocity: [0, 0] },
    annihilationDistance: 0.05,
  });
  const text = `name: ${name}\ndescription: >\n  ${description}\nengine: point-vortex-2d\n` +
    `parameters:\n  initial: { kind: random-cloud, count: 32, radius: 4 }\n` +
    `sweep:\n  grid:\n    initial.count: [32, 64]\nrealisations: 4\nseed: 20260115\n` +
    `run: { duration: ${(frames - 1) * dt}, sampleInterval: ${dt} }\n`;
  return {
    name,
    description,
    text,
    realisations: 4,
    seed: "20260115",
    sampleInterval: dt,
    duration: (frames - 1) * dt,
    points: [
      {
        label: labelA,
        varied: { "initial.count": 32 },
        params: params(32),
        realisations: [
          mk(0.5, 4, 3, 0),
          mk(0.5, 4, 3, 1),
          mk(0.5, 4, 3, 2),
          {
            index: 3,
            status: "failed",
            failureKind: "nan",
            error: hostile ? `NaN at t=3.5 ${xss}` : "position became NaN at t = 3.5 (vortex 17)",
            simTimeReached: 3.5,
            wallSeconds: 4.25,
            // Rows of a failed realisation are visible too (schema.ts); they must not enter the statistics.
            series: { msd: [0, 1e6, 1e6], cluster_rms_radius: [4, 1e6, 1e6], evaporated_count: [0, 99, 99] },
            scalars: { "drift.hamiltonian": 0.5 },
          },
        ],
      },
      {
        label: labelB,
        varied: { "initial.count": 64 },
        params: params(64),
        realisations: [mk(0.35, 5.6, 6, 0), mk(0.35, 5.6, 6, 1), mk(0.35, 5.6, 6, 2), {
          index: 3,
          status: "running",
        }],
      },
    ],
  };
}

/**
 * A hand-checkable study: point "a" has done realisations with msd [0,1,4], [0,2,5], [0,3,9], a failed one and
 * one beyond the planned 4; point "b" has one done realisation (msd [0, 7, NULL]) and one still running.
 */
export function tinyStudy(): FixtureStudy {
  return {
    name: "tiny",
    description: "hand-checkable numbers",
    text: "name: tiny\n",
    realisations: 4,
    seed: "1",
    sampleInterval: 0.5,
    duration: 1,
    points: [
      {
        label: "a",
        varied: { n: 1 },
        params: { n: 1 },
        realisations: [
          {
            index: 0,
            status: "done",
            series: { msd: [0, 1, 4], evaporated_count: [0, 1, 2] },
            scalars: { "drift.hamiltonian": 1e-10, steps: 10 },
            events: ["annihilation", "annihilation"],
          },
          {
            index: 1,
            status: "done",
            series: { msd: [0, 2, 5], evaporated_count: [0, 0, 1] },
            scalars: { "drift.hamiltonian": -3e-10, steps: 20 },
            events: ["annihilation"],
          },
          {
            index: 2,
            status: "done",
            series: { msd: [0, 3, 9], evaporated_count: [0, 2, 3] },
            scalars: { "drift.hamiltonian": 0, steps: 60 },
          },
          {
            index: 3,
            status: "failed",
            failureKind: "blow-up",
            error: "vortex 3 left the domain",
            simTimeReached: 0.75,
            series: { msd: [0, 100, 100] },
            scalars: { steps: 5 },
            events: ["annihilation"],
          },
          // Beyond the planned 4 realisations (left by an earlier revision): must not count.
          { index: 4, status: "done", series: { msd: [0, 1000, 1000] }, scalars: { steps: 1e6 } },
        ],
      },
      {
        label: "b",
        varied: { n: 2 },
        params: { n: 2 },
        realisations: [
          {
            index: 0,
            status: "done",
            series: { msd: [0, 7, null] },
            scalars: { evaporated_final: 5, "drift.impulse": 2e-12 },
          },
          { index: 1, status: "running" },
        ],
      },
    ],
  };
}

/** Aggregate of a fixture study, via a temporary database (for tests of charts and pages). */
export function aggregateOf(study: FixtureStudy): StudyAggregate {
  const dir = Deno.makeTempDirSync();
  try {
    writeFixtureDb(`${dir}/s.sqlite`, study);
    const db = openStoreReadOnly(`${dir}/s.sqlite`);
    try {
      return aggregateStudy(db);
    } finally {
      db.close();
    }
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
}
