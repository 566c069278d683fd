import { deepStrictEqual as assertEquals } from "node:assert/strict";
import { EngineFailure } from "../contract.ts";
import {
  type AssemblerConfig,
  FrameAssembler,
  type RowOrigin,
  Slot,
  SLOT_COUNT,
  type SlotIndex,
} from "./assemble.ts";
import { captureSink, controls } from "./_test_helpers.ts";

const NAMES = ["t", "id", "x", "y", "z", "circulation", "loop", "order", "marker"];

/** Rows as plain objects; row i is "line i + 2" of a file called data.csv. */
type Row = Partial<
  Record<"t" | "id" | "x" | "y" | "z" | "circulation" | "loop" | "order" | "marker", number>
>;

class FakeOrigin implements RowOrigin {
  ref = 0;
  describe(ref: number, slot: SlotIndex | null): string {
    return slot === null ? `data.csv:${ref}` : `data.csv:${ref} column '${NAMES[slot]}'`;
  }
}

function config2d(overrides: Partial<AssemblerConfig> = {}): AssemblerConfig {
  return {
    dimension: 2,
    controls: controls(0.3, 0.1),
    timing: { origin: "first-record", matchTolerance: 1e-6, allowEarlyEnd: false },
    factors: { t: 1, x: 1, y: 1, z: 1 },
    circulation: { asSign: false, factor: 1 },
    has: { id: true, order: false, marker: false },
    markerDefault: 0,
    source: "data.csv",
    selection: null,
    ...overrides,
  };
}

function config3d(overrides: Partial<AssemblerConfig> = {}): AssemblerConfig {
  return config2d({
    dimension: 3,
    controls: controls(0, 0.1),
    has: { id: true, order: true, marker: true },
    ...overrides,
  });
}

function feed(cfg: AssemblerConfig, rows: Row[]) {
  const sink = captureSink();
  const asm = new FrameAssembler(cfg, sink);
  const origin = new FakeOrigin();
  const v = new Float64Array(SLOT_COUNT);
  let read = 0;
  for (let i = 0; i < rows.length; i++) {
    const r = rows[i];
    origin.ref = i + 2;
    v.fill(0);
    for (const [k, val] of Object.entries(r)) v[NAMES.indexOf(k)] = val;
    if (r.x === undefined && cfg.dimension === 2 && r.id === undefined) {
      if (!asm.emptyRow(v[Slot.T], origin)) break;
    } else if (!asm.row(v, origin)) break;
    read++;
  }
  const summary = asm.finish();
  return { sink, read, summary };
}

function expectFail(cfg: AssemblerConfig, rows: Row[], parts: string[], kind = "invalid-state"): string {
  try {
    feed(cfg, rows);
  } catch (e) {
    if (!(e instanceof EngineFailure)) throw e;
    if (e.kind !== kind) throw new Error(`kind ${e.kind}, expected ${kind}: ${e.message}`);
    for (const p of parts) if (!e.message.includes(p)) throw new Error(`missing '${p}' in: ${e.message}`);
    console.log(`  message: ${e.message}`);
    return e.message;
  }
  throw new Error(`expected a failure containing ${JSON.stringify(parts)}`);
}

/** Two vortices at each of the given times. */
function pairRows(times: number[]): Row[] {
  return times.flatMap((t) => [
    { t, id: 1, x: 1 + t, y: 0, circulation: 1 },
    { t, id: 2, x: -1 - t, y: 0, circulation: -1 },
  ]);
}

// Frame-time matching is spindrift's own sampling rule (frame k at t ≈ k·Δt, contract.ts); common practice,
// no source.
Deno.test("FrameAssembler: one frame per sampled time, extra record times skipped, reading stops at the duration", () => {
  // Records every 0.05, frames every 0.1 up to 0.3: records at 0.05, 0.15, … are skipped; 0.35+ are never read.
  const times = [0, 0.05, 0.1, 0.15, 0.2, 0.25, 0.30000000000000004, 0.35, 0.4];
  const { sink, read, summary } = feed(config2d(), pairRows(times));
  const t3 = 0.30000000000000004;
  assertEquals(sink.frames.map((f) => [f.index, f.t]), [[0, 0], [1, 0.1], [2, 0.2], [3, t3]]);
  assertEquals(read, 14, "rows up to the group after the last frame time are read, no more");
  assertEquals(summary.scalars["import.record_times"], 7);
  assertEquals([...sink.frames[1].x], [1.1, -1.1]);
});

Deno.test("FrameAssembler: the nearest record within the tolerance wins", () => {
  // Jittered records; tolerance 0.3·Δt: frame 1 takes 0.098 over 0.12 (nearer to 0.1).
  const cfg = config2d({
    controls: controls(0.2, 0.1),
    timing: { origin: "first-record", matchTolerance: 0.3, allowEarlyEnd: false },
  });
  const { sink } = feed(cfg, pairRows([0.001, 0.07, 0.099, 0.121, 0.201]));
  // Origin first-record: times are shifted by the first record's time (0.001).
  assertEquals(sink.frames.map((f) => f.index), [0, 1, 2]);
  assertEquals(sink.frames.map((f) => Math.round(f.t * 1e6) / 1e6), [0, 0.098, 0.2]);
});

Deno.test("FrameAssembler: a frame time with no record in reach is an error naming both neighbours", () => {
  expectFail(config2d(), pairRows([0, 0.1, 0.25, 0.3]), [
    "data.csv: no record within 0.000001·Δt (Δt = run.sampleInterval = 0.1) of frame time t = 0.2 (frame 2)",
    "the record after it is at t = 0.25",
    "data.csv:6",
    "the records before it are at t = 0.1",
    "timing.matchTolerance",
  ]);
});

Deno.test("FrameAssembler: data ending before the duration fail unless allowEarlyEnd", () => {
  expectFail(config2d(), pairRows([0, 0.1]), [
    "the data end at t = 0.1",
    "before run.duration = 0.3: frame 2 (t = 0.2) has no record",
    "timing.allowEarlyEnd",
  ]);
  const cfg = config2d({ timing: { origin: "first-record", matchTolerance: 1e-6, allowEarlyEnd: true } });
  assertEquals(feed(cfg, pairRows([0, 0.1])).sink.frames.length, 2);
});

Deno.test("FrameAssembler: time origin first-record shifts times; zero needs a record at t = 0", () => {
  const shifted = feed(config2d(), pairRows([5, 5.1, 5.2, 5.3])).sink.frames;
  assertEquals(shifted[0].t, 0);
  assertEquals(shifted.length, 4);
  const zero = config2d({ timing: { origin: "zero", matchTolerance: 1e-6, allowEarlyEnd: false } });
  expectFail(zero, pairRows([5, 5.1]), ["of frame time t = 0 (frame 0)", "the record after it is at t = 5"]);
});

Deno.test("FrameAssembler: time going backwards is an error with the row and both times", () => {
  expectFail(config2d(), [...pairRows([0, 0.1]), { t: 0.05, id: 1, x: 0, y: 0, circulation: 1 }], [
    "data.csv:6 column 't': got 0.05, expected ≥ 0.1 (the time of data.csv:5): time goes backwards",
  ]);
});

Deno.test("FrameAssembler: a duplicate id within a frame is an error naming both rows", () => {
  const rows = [...pairRows([0]), { t: 0, id: 1, x: 3, y: 0, circulation: 1 }, ...pairRows([0.1, 0.2, 0.3])];
  expectFail(config2d(), rows, [
    "data.csv:4 column 'id': id 1 appears twice at t = 0 (also data.csv:2); ids must be unique within a frame",
  ]);
});

Deno.test("FrameAssembler: NaN, infinite and non-integer values are refused with row and column", () => {
  expectFail(config2d(), [{ t: 0, id: 1, x: NaN, y: 0, circulation: 1 }], [
    "data.csv:2 column 'x': got NaN, expected a finite number",
  ]);
  expectFail(config2d(), [{ t: 0, id: 1, x: 0, y: -Infinity, circulation: 1 }], [
    "data.csv:2 column 'y': got -Infinity, expected a finite number",
  ]);
  expectFail(config2d(), [{ t: NaN, id: 1, x: 0, y: 0, circulation: 1 }], ["column 't': got NaN"]);
  expectFail(config2d(), [{ t: 0, id: 1.5, x: 0, y: 0, circulation: 1 }], [
    "data.csv:2 column 'id': got 1.5, expected an integer id in [-2147483648, 2147483647]",
  ]);
  expectFail(config2d(), [{ t: 0, id: 1, x: 0, y: 0, circulation: 0 }], [
    "data.csv:2 column 'circulation': got 0, expected a nonzero circulation",
  ]);
});

Deno.test("FrameAssembler: units and circulation signs are applied", () => {
  const cfg = config2d({
    controls: controls(0.2, 0.1),
    factors: { t: 1e-3, x: 0.4, y: 0.4, z: 1 },
    circulation: { asSign: true, factor: 1 },
  });
  const rows: Row[] = [0, 100, 200].flatMap((t) => [{ t, id: 7, x: 2.5, y: -5, circulation: -6.283 }]);
  const { sink } = feed(cfg, rows);
  assertEquals(sink.frames.map((f) => f.t), [0, 0.1, 0.2]);
  assertEquals([...sink.frames[0].x, ...sink.frames[0].y, ...sink.frames[0].circulation!], [1, -2, -1]);
});

Deno.test("FrameAssembler: a point beyond run.maxDistance fails as blow-up with its row", () => {
  const cfg = config2d({ controls: controls(0.1, 0.1, 100) });
  expectFail(cfg, [{ t: 0, id: 1, x: 300, y: 400, circulation: 1 }], [
    "data.csv:2 column 'x': the point is at distance 500.0 from the origin",
    "run.maxDistance = 100",
  ], "blow-up");
});

Deno.test("FrameAssembler: track-end events for ids that disappear, at the last time seen", () => {
  const rows = [...pairRows([0, 0.1]), { t: 0.2, id: 2, x: -5, y: 1, circulation: -1 }, {
    t: 0.3,
    id: 2,
    x: -6,
    y: 1,
    circulation: -1,
  }];
  const { sink } = feed(config2d(), rows);
  assertEquals(sink.events, [{ t: 0.1, kind: "track-end", ids: [1], data: { x: 1.1, y: 0 } }]);
});

Deno.test("FrameAssembler: empty-frame rows give frames with no objects and end every track", () => {
  const rows: Row[] = [...pairRows([0, 0.1]), { t: 0.2 }, { t: 0.3 }];
  const { sink } = feed(config2d(), rows);
  assertEquals(sink.frames.map((f) => f.n), [2, 2, 0, 0]);
  assertEquals(sink.events.map((e) => e.ids[0]), [1, 2]);
  expectFail(config2d(), [...pairRows([0]), { t: 0 }], ["an empty-frame row (only the time) at t = 0"]);
});

// 3D frames list points loop by loop, each loop contiguous and in order (engines/contract.ts, Frame).
Deno.test("FrameAssembler 3D: points are ordered loop by loop by the order column", () => {
  const rows: Row[] = [
    { t: 0, id: 12, x: 1, y: 0, z: 0, loop: 5, order: 2, marker: 0 },
    { t: 0, id: 20, x: 0, y: 0, z: 1, loop: 3, order: 0, marker: 1 },
    { t: 0, id: 10, x: 1, y: 0, z: 0, loop: 5, order: 0, marker: 1 },
    { t: 0, id: 21, x: 0, y: 1, z: 1, loop: 3, order: 1, marker: 0 },
    { t: 0, id: 11, x: 0, y: 1, z: 0, loop: 5, order: 1, marker: 0 },
    { t: 0, id: 22, x: 1, y: 1, z: 1, loop: 3, order: 2, marker: 0 },
  ];
  const f = feed(config3d(), rows).sink.frames[0];
  assertEquals([...f.loop!], [3, 3, 3, 5, 5, 5]);
  assertEquals([...f.id], [20, 21, 22, 10, 11, 12]);
  assertEquals([...f.marker!], [1, 0, 0, 1, 0, 0]);
  assertEquals(f.circulation, null);
});

Deno.test("FrameAssembler 3D: loop errors — too few points, repeated position, non-contiguous loop", () => {
  const tri = (loop: number, t = 0): Row[] =>
    [0, 1, 2].map((o) => ({ t, id: loop * 10 + o, x: o, y: 0, z: 0, loop, order: o, marker: 0 }));
  expectFail(config3d(), [...tri(1), { t: 0, id: 90, x: 0, y: 0, z: 0, loop: 9, order: 0, marker: 0 }], [
    "data.csv:5 column 'loop': loop 9 has 1 point at t = 0; a closed filament loop needs at least 3",
  ]);
  expectFail(config3d(), [...tri(1), { t: 0, id: 15, x: 0, y: 0, z: 0, loop: 1, order: 2, marker: 0 }], [
    "data.csv:5 column 'order': loop 1 has two points at position 2 at t = 0 (also data.csv:4)",
  ]);
  const noOrder = config3d({ has: { id: true, order: false, marker: true } });
  expectFail(noOrder, [...tri(1), ...tri(2), {
    t: 0,
    id: 13,
    x: 0,
    y: 0,
    z: 0,
    loop: 1,
    order: 0,
    marker: 0,
  }], [
    "data.csv:8 column 'loop': loop 1 continues here at t = 0 after other loops (it starts at data.csv:2)",
  ]);
  expectFail(config3d(), [{ t: 0, id: 1, x: 0, y: 0, z: 0, loop: 1, order: 0, marker: 2 }], [
    "data.csv:2 column 'marker': got 2, expected 0 or 1",
  ]);
});

Deno.test("FrameAssembler 3D: without ids points are numbered per frame; markers default as configured", () => {
  const cfg = config3d({ has: { id: false, order: false, marker: false }, markerDefault: 0 });
  const rows: Row[] = [0, 1, 2].map((o) => ({ t: 0, x: o, y: 0, z: 0, loop: 4 }));
  const f = feed(cfg, rows).sink.frames[0];
  assertEquals([...f.id], [0, 1, 2]);
  assertEquals([...f.marker!], [0, 0, 0]);
});

Deno.test("FrameAssembler: no rows at all is an error naming the selection", () => {
  expectFail(config2d({ selection: "rows with run = 4" }), [], [
    "data.csv (rows with run = 4): no data rows",
  ]);
});
