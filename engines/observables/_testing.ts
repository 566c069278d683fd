/** Test helpers for this folder: hand-built frames and float checks (used by the *_test.ts files only). */
import nodeAssert from "node:assert/strict";
import type { EngineCapabilities, Frame, RunControls } from "../contract.ts";
import type { ClassificationConfig, ObservableContext } from "./contract.ts";

/** Asserts |got − expected| ≤ rel·|expected| (or ≤ rel when expected = 0), printing got, expected and diff. */
export function assertClose(got: number, expected: number, rel: number, what: string): void {
  const diff = Math.abs(got - expected);
  const scale = expected === 0 ? 1 : Math.abs(expected);
  if (!(diff <= rel * scale)) {
    throw new Error(
      `${what}: got ${got}, expected ${expected}, diff ${diff} (relative ${diff / scale}, tolerance ${rel})`,
    );
  }
}

export const CAPS_2D: EngineCapabilities = {
  dimension: 2,
  fields: ["circulation"],
  objects: "vortex",
  events: {},
  diagnostics: {},
  units: { length: "ℓ", time: "ℓ²/κ", circulation: "κ" },
};

export const CAPS_3D: EngineCapabilities = {
  dimension: 3,
  fields: ["loop", "marker"],
  objects: "filament-point",
  events: {},
  diagnostics: {},
  units: { length: "ℓ", time: "ℓ²/κ", circulation: "κ" },
};

const CONTROLS: RunControls = { duration: 10, sampleInterval: 1, tolerance: 1e-8, maxDistance: 1e6 };

export const CONFIG: ClassificationConfig = {
  separationFactor: 0.3,
  radiusFactor: 2,
  stickyFrames: 3,
  outwardCosine: 0.5,
  speedTolerance: 0.25,
};

export function context(
  capabilities: EngineCapabilities,
  classification: ClassificationConfig = CONFIG,
  coreRadius?: number,
): ObservableContext {
  return { capabilities, controls: CONTROLS, classification, coreRadius };
}

/** A 2D vortex, as plain numbers. */
export interface Vortex {
  id: number;
  x: number;
  y: number;
  g: number;
}

export function frame2d(index: number, t: number, vortices: readonly Vortex[]): Frame {
  const n = vortices.length;
  return {
    index,
    t,
    n,
    id: Int32Array.from(vortices, (v) => v.id),
    x: Float64Array.from(vortices, (v) => v.x),
    y: Float64Array.from(vortices, (v) => v.y),
    z: null,
    circulation: Float64Array.from(vortices, (v) => v.g),
    loop: null,
    marker: null,
    diagnostics: {},
  };
}

/** A closed 3D loop given point by point; `markerEvery` = m flags points 0, m, 2m, … as markers. */
export interface Loop {
  loop: number;
  ids: number[];
  x: number[];
  y: number[];
  z: number[];
  markerEvery: number;
}

export function frame3d(index: number, t: number, loops: readonly Loop[]): Frame {
  const id: number[] = [], x: number[] = [], y: number[] = [], z: number[] = [], loop: number[] = [];
  const marker: number[] = [];
  for (const l of loops) {
    for (let k = 0; k < l.x.length; k++) {
      id.push(l.ids[k]);
      x.push(l.x[k]);
      y.push(l.y[k]);
      z.push(l.z[k]);
      loop.push(l.loop);
      marker.push(l.markerEvery > 0 && k % l.markerEvery === 0 ? 1 : 0);
    }
  }
  return {
    index,
    t,
    n: id.length,
    id: Int32Array.from(id),
    x: Float64Array.from(x),
    y: Float64Array.from(y),
    z: Float64Array.from(z),
    circulation: null,
    loop: Int32Array.from(loop),
    marker: Uint8Array.from(marker),
    diagnostics: {},
  };
}

/**
 * Regular M-gon ring of radius r centred at c with unit normal nrm; points counterclockwise about nrm, so that
 * by the right-hand rule the ring propagates along +nrm (docs/methods.md §3.1). Ids firstId, firstId + 1, …
 */
export function ring(
  loopId: number,
  firstId: number,
  c: readonly [number, number, number],
  nrm: readonly [number, number, number],
  r: number,
  m: number,
  markerEvery = 4,
): Loop {
  // e1 ⟂ nrm, e2 = nrm × e1.
  const [nx, ny, nz] = nrm;
  let ax = 1, ay = 0, az = 0;
  if (Math.abs(nx) > 0.9) [ax, ay, az] = [0, 1, 0];
  const d = ax * nx + ay * ny + az * nz;
  let e1x = ax - d * nx, e1y = ay - d * ny, e1z = az - d * nz;
  const e1n = Math.hypot(e1x, e1y, e1z);
  e1x /= e1n;
  e1y /= e1n;
  e1z /= e1n;
  const e2x = ny * e1z - nz * e1y, e2y = nz * e1x - nx * e1z, e2z = nx * e1y - ny * e1x;
  const out: Loop = { loop: loopId, ids: [], x: [], y: [], z: [], markerEvery };
  for (let k = 0; k < m; k++) {
    const phi = 2 * Math.PI * k / m;
    const cs = Math.cos(phi), sn = Math.sin(phi);
    out.ids.push(firstId + k);
    out.x.push(c[0] + r * (cs * e1x + sn * e2x));
    out.y.push(c[1] + r * (cs * e1y + sn * e2y));
    out.z.push(c[2] + r * (cs * e1z + sn * e2z));
  }
  return out;
}

/** The loop moved rigidly by (dx, dy, dz). */
export function shifted(l: Loop, dx: number, dy: number, dz: number): Loop {
  return { ...l, x: l.x.map((v) => v + dx), y: l.y.map((v) => v + dy), z: l.z.map((v) => v + dz) };
}

/** Deep strict equality (node:assert), with a message naming what is compared. */
export function assertEquals(got: unknown, expected: unknown, what = "value"): void {
  nodeAssert.deepStrictEqual(
    got,
    expected,
    `${what}: got ${JSON.stringify(got)}, expected ${JSON.stringify(expected)}`,
  );
}

/** Asserts that `fn` throws an instance of `cls` whose message contains `includes`. */
export function assertThrows(
  fn: () => unknown,
  cls: new (...args: never[]) => Error,
  includes: string,
): void {
  nodeAssert.throws(fn, (e: unknown) => e instanceof cls && e.message.includes(includes));
}

export const assert: (value: unknown, message?: string) => asserts value = nodeAssert.ok;
