// AssemblyScript source (compiled to WebAssembly by the launcher's install step, tools/build_wasm.sh; excluded
// from deno check, lint and fmt). Point-vortex velocities in the doubly periodic square box by the Weierstrass
// ζ form of engines/point-vortex/periodic.ts, two pairs per f64x2 SIMD instruction. The host
// (engines/point-vortex/wasm_periodic.ts) writes x, y, Γ and the lattice coefficients, and reads u, v.
let X: usize = 0;
let Y: usize = 0;
let G: usize = 0;
let U: usize = 0;
let V: usize = 0;
let C: usize = 0; // 8 lattice coefficients c0…c7

/** Places the arrays for up to cap vortices (+2 lanes of padding); grows memory. */
export function layout(cap: i32): void {
  const d = <usize> (cap + 2) * 8;
  let p: usize = 1024;
  C = p;
  p += 128;
  X = p;
  p += d;
  Y = p;
  p += d;
  G = p;
  p += d;
  U = p;
  p += d;
  V = p;
  p += d;
  const need = (p + 65535) >> 16;
  const have = <usize> memory.size();
  if (need > have) memory.grow(<i32> (need - have));
}

export function ptr(k: i32): usize {
  switch (k) {
    case 0:
      return X;
    case 1:
      return Y;
    case 2:
      return G;
    case 3:
      return U;
    case 4:
      return V;
    default:
      return C;
  }
}

/**
 * u, v (without the factor 1/(2πL)) of n vortices in a box of side `side`; returns the smallest squared
 * minimum-image pair distance. See periodic.ts for the formula.
 */
export function velocity(n: i32, side: f64): f64 {
  const inv = 1.0 / side;
  const vside = f64x2.splat(side), vinv = f64x2.splat(inv);
  for (let i = 0; i < n; i++) {
    store<f64>(U + (<usize> i << 3), 0);
    store<f64>(V + (<usize> i << 3), 0);
  }
  const c0 = f64x2.splat(load<f64>(C)),
    c1 = f64x2.splat(load<f64>(C + 8)),
    c2 = f64x2.splat(load<f64>(C + 16));
  const c3 = f64x2.splat(load<f64>(C + 24)),
    c4 = f64x2.splat(load<f64>(C + 32)),
    c5 = f64x2.splat(load<f64>(C + 40));
  const c6 = f64x2.splat(load<f64>(C + 48)), c7 = f64x2.splat(load<f64>(C + 56));
  const two = f64x2.splat(2), three = f64x2.splat(3), four = f64x2.splat(4), nine = f64x2.splat(9);
  const fifteen = f64x2.splat(15), pi = f64x2.splat(3.141592653589793), one = f64x2.splat(1);
  let minR2 = Infinity;
  let vmin = f64x2.splat(Infinity);
  for (let i = 0; i < n - 1; i++) {
    const io = <usize> i << 3;
    const xi = f64x2.splat(load<f64>(X + io)), yi = f64x2.splat(load<f64>(Y + io));
    const gi = f64x2.splat(load<f64>(G + io));
    let su = f64x2.splat(0), sv = f64x2.splat(0);
    let j = i + 1;
    for (; j + 1 < n; j += 2) {
      const jo = <usize> j << 3;
      // differences in the caller's units (exact for close pairs), then in box units
      let dx = f64x2.sub(xi, v128.load(X + jo));
      let dy = f64x2.sub(yi, v128.load(Y + jo));
      dx = f64x2.sub(dx, f64x2.mul(vside, f64x2.nearest(f64x2.mul(dx, vinv))));
      dy = f64x2.sub(dy, f64x2.mul(vside, f64x2.nearest(f64x2.mul(dy, vinv))));
      const a = f64x2.mul(dx, vinv), b = f64x2.mul(dy, vinv);
      const a2 = f64x2.mul(a, a), b2 = f64x2.mul(b, b);
      vmin = f64x2.min(vmin, f64x2.add(a2, b2));
      const z2r = f64x2.sub(a2, b2), z2i = f64x2.mul(two, f64x2.mul(a, b));
      const wr = f64x2.sub(f64x2.mul(z2r, z2r), f64x2.mul(z2i, z2i)),
        wi = f64x2.mul(two, f64x2.mul(z2r, z2i));
      const w2r = f64x2.sub(f64x2.mul(wr, wr), f64x2.mul(wi, wi)), w2i = f64x2.mul(two, f64x2.mul(wr, wi));
      // P(w) = E(w²) + w·O(w²), E = c0 + c2 w² + c4 w⁴ + c6 w⁶, O = c1 + c3 w² + c5 w⁴ + c7 w⁶
      let er = c6, ei = f64x2.splat(0), orr = c7, oi = f64x2.splat(0);
      let t = f64x2.add(f64x2.sub(f64x2.mul(er, w2r), f64x2.mul(ei, w2i)), c4);
      ei = f64x2.add(f64x2.mul(er, w2i), f64x2.mul(ei, w2r));
      er = t;
      t = f64x2.add(f64x2.sub(f64x2.mul(orr, w2r), f64x2.mul(oi, w2i)), c5);
      oi = f64x2.add(f64x2.mul(orr, w2i), f64x2.mul(oi, w2r));
      orr = t;
      t = f64x2.add(f64x2.sub(f64x2.mul(er, w2r), f64x2.mul(ei, w2i)), c2);
      ei = f64x2.add(f64x2.mul(er, w2i), f64x2.mul(ei, w2r));
      er = t;
      t = f64x2.add(f64x2.sub(f64x2.mul(orr, w2r), f64x2.mul(oi, w2i)), c3);
      oi = f64x2.add(f64x2.mul(orr, w2i), f64x2.mul(oi, w2r));
      orr = t;
      t = f64x2.add(f64x2.sub(f64x2.mul(er, w2r), f64x2.mul(ei, w2i)), c0);
      ei = f64x2.add(f64x2.mul(er, w2i), f64x2.mul(ei, w2r));
      er = t;
      t = f64x2.add(f64x2.sub(f64x2.mul(orr, w2r), f64x2.mul(oi, w2i)), c1);
      oi = f64x2.add(f64x2.mul(orr, w2i), f64x2.mul(oi, w2r));
      orr = t;
      const pr = f64x2.add(er, f64x2.sub(f64x2.mul(orr, wr), f64x2.mul(oi, wi)));
      const pim = f64x2.add(ei, f64x2.add(f64x2.mul(orr, wi), f64x2.mul(oi, wr)));
      const z3r = f64x2.sub(f64x2.mul(z2r, a), f64x2.mul(z2i, b)),
        z3i = f64x2.add(f64x2.mul(z2r, b), f64x2.mul(z2i, a));
      const nr = f64x2.sub(f64x2.add(f64x2.mul(nine, w2r), f64x2.mul(fifteen, wr)), four);
      const ni = f64x2.add(f64x2.mul(nine, w2i), f64x2.mul(fifteen, wi));
      const qr = f64x2.sub(f64x2.add(w2r, f64x2.mul(three, wr)), four),
        qi = f64x2.add(w2i, f64x2.mul(three, wi));
      const dr = f64x2.sub(f64x2.mul(qr, a), f64x2.mul(qi, b)),
        di = f64x2.add(f64x2.mul(qr, b), f64x2.mul(qi, a));
      const iv = f64x2.div(one, f64x2.add(f64x2.mul(dr, dr), f64x2.mul(di, di)));
      const fr = f64x2.sub(
        f64x2.add(
          f64x2.mul(f64x2.add(f64x2.mul(nr, dr), f64x2.mul(ni, di)), iv),
          f64x2.sub(f64x2.mul(z3r, pr), f64x2.mul(z3i, pim)),
        ),
        f64x2.mul(pi, a),
      );
      const fi = f64x2.add(
        f64x2.add(
          f64x2.mul(f64x2.sub(f64x2.mul(ni, dr), f64x2.mul(nr, di)), iv),
          f64x2.add(f64x2.mul(z3r, pim), f64x2.mul(z3i, pr)),
        ),
        f64x2.mul(pi, b),
      );
      const gj = v128.load(G + jo);
      su = f64x2.add(su, f64x2.mul(gj, fi));
      sv = f64x2.add(sv, f64x2.mul(gj, fr));
      v128.store(U + jo, f64x2.sub(v128.load(U + jo), f64x2.mul(gi, fi)));
      v128.store(V + jo, f64x2.sub(v128.load(V + jo), f64x2.mul(gi, fr)));
    }
    let u = f64x2.extract_lane(su, 0) + f64x2.extract_lane(su, 1);
    let v = f64x2.extract_lane(sv, 0) + f64x2.extract_lane(sv, 1);
    if (j < n) {
      // odd tail: one pair, scalar
      const r = pairScalar(load<f64>(X + io), load<f64>(Y + io), j, side, inv);
      const gj = load<f64>(G + (<usize> j << 3)), gs = load<f64>(G + io);
      u += gj * tailFi;
      v += gj * tailFr;
      store<f64>(U + (<usize> j << 3), load<f64>(U + (<usize> j << 3)) - gs * tailFi);
      store<f64>(V + (<usize> j << 3), load<f64>(V + (<usize> j << 3)) - gs * tailFr);
      if (r < minR2) minR2 = r;
    }
    store<f64>(U + io, load<f64>(U + io) + u);
    store<f64>(V + io, load<f64>(V + io) + v);
  }
  const m = min(f64x2.extract_lane(vmin, 0), f64x2.extract_lane(vmin, 1));
  return (m < minR2 ? m : minR2) * side * side;
}

let tailFr: f64 = 0;
let tailFi: f64 = 0;

/** One pair (i at xi, yi; j by index) in scalar arithmetic; sets tailFr, tailFi; returns r²/L². */
function pairScalar(xi: f64, yi: f64, j: i32, side: f64, inv: f64): f64 {
  const jo = <usize> j << 3;
  let dx = xi - load<f64>(X + jo), dy = yi - load<f64>(Y + jo);
  dx -= side * nearest(dx * inv);
  dy -= side * nearest(dy * inv);
  const a = dx * inv, b = dy * inv;
  const z2r = a * a - b * b, z2i = 2 * a * b;
  const wr = z2r * z2r - z2i * z2i, wi = 2 * z2r * z2i;
  const w2r = wr * wr - wi * wi, w2i = 2 * wr * wi;
  let er = load<f64>(C + 48), ei = 0.0, orr = load<f64>(C + 56), oi = 0.0, t: f64;
  t = er * w2r - ei * w2i + load<f64>(C + 32);
  ei = er * w2i + ei * w2r;
  er = t;
  t = orr * w2r - oi * w2i + load<f64>(C + 40);
  oi = orr * w2i + oi * w2r;
  orr = t;
  t = er * w2r - ei * w2i + load<f64>(C + 16);
  ei = er * w2i + ei * w2r;
  er = t;
  t = orr * w2r - oi * w2i + load<f64>(C + 24);
  oi = orr * w2i + oi * w2r;
  orr = t;
  t = er * w2r - ei * w2i + load<f64>(C);
  ei = er * w2i + ei * w2r;
  er = t;
  t = orr * w2r - oi * w2i + load<f64>(C + 8);
  oi = orr * w2i + oi * w2r;
  orr = t;
  const pr = er + orr * wr - oi * wi, pim = ei + orr * wi + oi * wr;
  const z3r = z2r * a - z2i * b, z3i = z2r * b + z2i * a;
  const nr = 9 * w2r + 15 * wr - 4, ni = 9 * w2i + 15 * wi;
  const qr = w2r + 3 * wr - 4, qi = w2i + 3 * wi;
  const dr = qr * a - qi * b, di = qr * b + qi * a;
  const iv = 1.0 / (dr * dr + di * di);
  tailFr = (nr * dr + ni * di) * iv + z3r * pr - z3i * pim - 3.141592653589793 * a;
  tailFi = (ni * dr - nr * di) * iv + z3r * pim + z3i * pr + 3.141592653589793 * b;
  return a * a + b * b;
}
