// AssemblyScript source (compiled to WebAssembly by the launcher's install step, see tools/build_wasm.sh;
// excluded from deno check, lint and fmt). Exact straight-segment Biot–Savart sums of one cell pair in f32x4
// SIMD lanes, for the FMM's near field (engines/filament/wasm_p2p.ts is the host side).
//
// Memory layout (byte offsets from layout()): per target t < nt: TX, TY, TZ (f32, relative coordinates),
// OA, OB (i32, the target's own segment indices among the sources, −1 if absent); per source k < ns: SX, SY,
// SZ (segment midpoints), HX, HY, HZ (half segment vectors); per target: UX, UY, UZ (f64 results).
// Formula (as biot_savart.ts): r₁ = P − A, r₂ = P − B, u = (r₁×r₂)(|r₁| + |r₂|)/(|r₁||r₂|(|r₁||r₂| + r₁·r₂)),
// for r₁·r₂ < 0 written (r₁×r₂)(|r₁| + |r₂|)(|r₁||r₂| − r₁·r₂)/(|r₁||r₂||r₁×r₂|²) (no cancellation).
let TX: usize = 0;
let TY: usize = 0;
let TZ: usize = 0;
let OA: usize = 0;
let OB: usize = 0;
let SX: usize = 0;
let SY: usize = 0;
let SZ: usize = 0;
let HX: usize = 0;
let HY: usize = 0;
let HZ: usize = 0;
let UX: usize = 0;
let UY: usize = 0;
let UZ: usize = 0;

/** Places the arrays for up to cap targets and cap sources (+4 lanes of padding); grows memory. */
export function layout(cap: i32): void {
  const c = <usize>(cap + 4);
  const f = c * 4, d = c * 8;
  let p: usize = 1024;
  TX = p; p += f; TY = p; p += f; TZ = p; p += f; OA = p; p += f; OB = p; p += f;
  SX = p; p += f; SY = p; p += f; SZ = p; p += f; HX = p; p += f; HY = p; p += f; HZ = p; p += f;
  p = (p + 15) & ~(<usize>15);
  UX = p; p += d; UY = p; p += d; UZ = p; p += d;
  const need = (p + 65535) >> 16;
  const have = <usize>memory.size();
  if (need > have) memory.grow(<i32>(need - have));
}

export function ptr(k: i32): usize {
  switch (k) {
    case 0: return TX; case 1: return TY; case 2: return TZ; case 3: return OA; case 4: return OB;
    case 5: return SX; case 6: return SY; case 7: return SZ; case 8: return HX; case 9: return HY;
    case 10: return HZ; case 11: return UX; case 12: return UY; default: return UZ;
  }
}

/** Writes into U the sums over sources [0, ns) at targets [0, nt), skipping each target's own segments. */
export function p2p(nt: i32, ns: i32): void {
  const zero = f32x4.splat(0);
  const one = f32x4.splat(1);
  const lane = i32x4(0, 1, 2, 3);
  const end = i32x4.splat(ns);
  for (let t = 0; t < nt; t++) {
    const to = <usize>t << 2;
    const px = f32x4.splat(load<f32>(TX + to));
    const py = f32x4.splat(load<f32>(TY + to));
    const pz = f32x4.splat(load<f32>(TZ + to));
    const own1 = i32x4.splat(load<i32>(OA + to));
    const own2 = i32x4.splat(load<i32>(OB + to));
    let ax = zero, ay = zero, az = zero;
    for (let k = 0; k < ns; k += 4) {
      const so = <usize>k << 2;
      const rx = f32x4.sub(px, v128.load(SX + so));
      const ry = f32x4.sub(py, v128.load(SY + so));
      const rz = f32x4.sub(pz, v128.load(SZ + so));
      const hx = v128.load(HX + so), hy = v128.load(HY + so), hz = v128.load(HZ + so);
      const r1x = f32x4.add(rx, hx), r1y = f32x4.add(ry, hy), r1z = f32x4.add(rz, hz);
      const r2x = f32x4.sub(rx, hx), r2y = f32x4.sub(ry, hy), r2z = f32x4.sub(rz, hz);
      const n1 = f32x4.sqrt(f32x4.add(f32x4.add(f32x4.mul(r1x, r1x), f32x4.mul(r1y, r1y)), f32x4.mul(r1z, r1z)));
      const n2 = f32x4.sqrt(f32x4.add(f32x4.add(f32x4.mul(r2x, r2x), f32x4.mul(r2y, r2y)), f32x4.mul(r2z, r2z)));
      const nn = f32x4.mul(n1, n2);
      const cx = f32x4.sub(f32x4.mul(r1y, r2z), f32x4.mul(r1z, r2y));
      const cy = f32x4.sub(f32x4.mul(r1z, r2x), f32x4.mul(r1x, r2z));
      const cz = f32x4.sub(f32x4.mul(r1x, r2y), f32x4.mul(r1y, r2x));
      const dot = f32x4.add(f32x4.add(f32x4.mul(r1x, r2x), f32x4.mul(r1y, r2y)), f32x4.mul(r1z, r2z));
      const c2 = f32x4.add(f32x4.add(f32x4.mul(cx, cx), f32x4.mul(cy, cy)), f32x4.mul(cz, cz));
      const pos = f32x4.ge(dot, zero);
      const num = f32x4.mul(f32x4.add(n1, n2), v128.bitselect(one, f32x4.sub(nn, dot), pos));
      const den = f32x4.mul(nn, v128.bitselect(f32x4.add(nn, dot), c2, pos));
      const idx = i32x4.add(i32x4.splat(k), lane);
      const bad = v128.or(
        v128.or(i32x4.eq(idx, own1), i32x4.eq(idx, own2)),
        v128.or(i32x4.ge_s(idx, end), v128.not(f32x4.gt(den, zero))),
      );
      const f = v128.andnot(f32x4.div(num, den), bad);
      ax = f32x4.add(ax, f32x4.mul(f, cx));
      ay = f32x4.add(ay, f32x4.mul(f, cy));
      az = f32x4.add(az, f32x4.mul(f, cz));
    }
    const uo = <usize>t << 3;
    store<f64>(UX + uo, <f64>f32x4.extract_lane(ax, 0) + <f64>f32x4.extract_lane(ax, 1) +
      <f64>f32x4.extract_lane(ax, 2) + <f64>f32x4.extract_lane(ax, 3));
    store<f64>(UY + uo, <f64>f32x4.extract_lane(ay, 0) + <f64>f32x4.extract_lane(ay, 1) +
      <f64>f32x4.extract_lane(ay, 2) + <f64>f32x4.extract_lane(ay, 3));
    store<f64>(UZ + uo, <f64>f32x4.extract_lane(az, 0) + <f64>f32x4.extract_lane(az, 1) +
      <f64>f32x4.extract_lane(az, 2) + <f64>f32x4.extract_lane(az, 3));
  }
}
