import { assertAbs, assertRel } from "./_testing.ts";
import { periodicGreen, velocityPeriodic, velocityPeriodicImageSeries } from "./periodic.ts";
import { PeriodicKernel } from "./wasm_periodic.ts";

const TWO_PI = 2 * Math.PI;

type Kernel = typeof velocityPeriodic;
const wasm = PeriodicKernel.load();
/** The kernels checked by every test: the ζ form (TypeScript, WebAssembly f64x2) and the image series. */
const KERNELS: [string, Kernel][] = [
  ["velocityPeriodic", velocityPeriodic],
  ["PeriodicKernel (wasm)", (n, x, y, g, side, u, v) => wasm.velocity(n, x, y, g, side, u, v)],
  ["velocityPeriodicImageSeries", velocityPeriodicImageSeries],
];
let kernel: Kernel = velocityPeriodic;

/** Velocity at (px, py) of one vortex Γ at the origin in a box of side L (probe with Γ = 0). */
function field(px: number, py: number, side = TWO_PI, gamma = 1): [number, number] {
  const x = Float64Array.of(0, px), y = Float64Array.of(0, py), g = Float64Array.of(gamma, 0);
  const u = new Float64Array(2), v = new Float64Array(2);
  kernel(2, x, y, g, side, u, v);
  return [u[1], v[1]];
}

/** Runs `body` once per kernel (the failure message names the kernel). */
function eachKernel(body: () => void): void {
  for (const [name, k] of KERNELS) {
    kernel = k;
    try {
      body();
    } catch (e) {
      throw new Error(`${name}: ${e instanceof Error ? e.message : e}`);
    }
  }
}

Deno.test("periodic kernels (ζ form, WebAssembly, image series): matches the Weiss–McWilliams reference values", () => {
  eachKernel(() => {
    // docs/check-values.md §1.5 reference table (Γ = 1, L = 2π): Weiss & McWilliams, Phys. Fluids A 3, 835 (1991),
    // values verified there against an independent Fourier series. Tolerance 1e-12 absolute (13 decimals given).
    const table: [number, number, number, number][] = [
      [1.0, 0.5, -0.0577718066553, 0.1145789633536],
      [2.0, -1.3, 0.0241153230250, 0.0313748452152],
    ];
    for (const [x, y, u, v] of table) {
      const [gu, gv] = field(x, y);
      assertAbs(gu, u, 1e-12, `u(${x}, ${y})`);
      assertAbs(gv, v, 1e-12, `v(${x}, ${y})`);
    }
  });
});

Deno.test("periodic kernels (ζ form, WebAssembly, image series): vanishes at the symmetry points of the box", () => {
  eachKernel(() => {
    // docs/check-values.md §1.5: u = v = 0 at (π, 0), (0, π), (π, π).
    for (const [x, y] of [[Math.PI, 0], [0, Math.PI], [Math.PI, Math.PI]]) {
      const [u, v] = field(x, y);
      assertAbs(u, 0, 1e-15, `u(${x}, ${y})`);
      assertAbs(v, 0, 1e-15, `v(${x}, ${y})`);
    }
  });
});

Deno.test("periodic kernels (ζ form, WebAssembly, image series): scales with the box side and is periodic", () => {
  eachKernel(() => {
    // docs/check-values.md §1.5: u_L(x, y) = (2π/L) u_2π(2πx/L, 2πy/L).
    const L = 10, s = TWO_PI / L;
    const [u0, v0] = field(1.0 / s, 0.5 / s, L);
    assertRel(u0, s * -0.0577718066553, 1e-11, "u_L");
    assertRel(v0, s * 0.1145789633536, 1e-11, "v_L");
    // Periodicity: a probe shifted by whole boxes sees the same velocity.
    const [u1, v1] = field(1.0 / s + 3 * L, 0.5 / s - 2 * L, L);
    assertRel(u1, u0, 1e-12, "u shifted");
    assertRel(v1, v0, 1e-12, "v shifted");
  });
});

Deno.test("periodic kernels (ζ form, WebAssembly, image series): tends to the free vortex κ/(2πr) for close pairs without cancellation", () => {
  eachKernel(() => {
    // Saffman (1992) §7.1: near the vortex the periodic field is the free field plus a smooth correction O(r/L²).
    for (const r of [1e-3, 1e-6, 1e-9]) {
      const [u, v] = field(0, r, TWO_PI);
      assertRel(u, -1 / (TWO_PI * r), Math.max(1e-13, 0.1 * r * r), `u at r = ${r}`);
      assertAbs(v, 0, 1e-15, `v at r = ${r}`);
    }
  });
});

Deno.test("periodic kernels (ζ form, WebAssembly, image series): is antisymmetric: a ± pair in the box translates rigidly", () => {
  eachKernel(() => {
    // Weiss & McWilliams (1991): the pair kernel is odd, so ΣΓ_i ż_i = 0 (impulse conserved).
    const x = Float64Array.of(0, 1), y = Float64Array.of(0, 0.5), g = Float64Array.of(1, -1);
    const u = new Float64Array(2), v = new Float64Array(2);
    kernel(2, x, y, g, TWO_PI, u, v);
    // Both move with the reference velocity of docs/check-values.md §1.5 at separation (1.0, 0.5).
    for (let i = 0; i < 2; i++) {
      assertAbs(u[i], -0.0577718066553, 1e-12, `u[${i}]`);
      assertAbs(v[i], 0.1145789633536, 1e-12, `v[${i}]`);
    }
  });
});

Deno.test("periodicGreen matches the reference value, is symmetric and generates the velocity", () => {
  // docs/check-values.md §1.5: G(1.0, 0.5) = −0.0458787983 (box 2π), G symmetric in x ↔ y, u = −Γ ∂G/∂y, v = Γ ∂G/∂x.
  assertAbs(periodicGreen(1.0, 0.5, TWO_PI), -0.0458787983, 1e-10, "G(1.0, 0.5)");
  assertAbs(
    periodicGreen(0.5, 1.0, TWO_PI),
    periodicGreen(1.0, 0.5, TWO_PI),
    1e-15,
    "G(0.5, 1.0) − G(1.0, 0.5)",
  );
  assertAbs(periodicGreen(1.0 + TWO_PI, 0.5 - 2 * TWO_PI, TWO_PI), -0.0458787983, 1e-10, "G shifted");
  const h = 1e-5;
  for (const [x, y] of [[1.0, 0.5], [2.0, -1.3]]) {
    const [u, v] = field(x, y);
    const dGdy = (periodicGreen(x, y + h, TWO_PI) - periodicGreen(x, y - h, TWO_PI)) / (2 * h);
    const dGdx = (periodicGreen(x + h, y, TWO_PI) - periodicGreen(x - h, y, TWO_PI)) / (2 * h);
    assertRel(-dGdy, u, 1e-8, `−∂G/∂y at (${x}, ${y})`);
    assertRel(dGdx, v, 1e-8, `∂G/∂x at (${x}, ${y})`);
  }
});

/** The docs/check-values.md §1.5 series written out directly (|m| ≤ 5, Math.cosh/sin/cos), box 2π, Γ = 1. */
function textbookSeries(x: number, y: number): [number, number] {
  let su = 0, sv = 0;
  for (let m = -5; m <= 5; m++) {
    su += Math.sin(y) / (Math.cosh(x - 2 * Math.PI * m) - Math.cos(y));
    sv += Math.sin(x) / (Math.cosh(y - 2 * Math.PI * m) - Math.cos(x));
  }
  return [-su / (4 * Math.PI), sv / (4 * Math.PI)];
}

Deno.test("periodic kernels (ζ form, WebAssembly, image series): agrees with the directly evaluated image series over the whole box", () => {
  eachKernel(() => {
    // docs/check-values.md §1.5 series (Weiss & McWilliams 1991), evaluated term by term with library functions; the
    // direct form loses relative accuracy for close pairs (cosh a − cos b cancels), so compare away from r → 0
    // with tolerance 1e-13 × the free-vortex speed 1/(2πr).
    let state = 12345;
    const next = () => (state = (Math.imul(state, 1103515245) + 12345) >>> 0) / 4294967296;
    for (let k = 0; k < 2000; k++) {
      const x = (next() - 0.5) * 2 * Math.PI, y = (next() - 0.5) * 2 * Math.PI;
      const r = Math.hypot(x, y);
      if (r < 0.05) continue;
      const [u, v] = field(x, y);
      const [eu, ev] = textbookSeries(x, y);
      const scale = 1 / (2 * Math.PI * r);
      assertAbs(u, eu, 1e-13 * scale, `u(${x}, ${y})`);
      assertAbs(v, ev, 1e-13 * scale, `v(${x}, ${y})`);
    }
  });
});
