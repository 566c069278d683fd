/**
 * Synthetic walkers with known transport laws, for testing the MSD pipeline and for example studies:
 * Brownian walkers (MSD = 2dDt), Ornstein–Uhlenbeck velocity walkers (ballistic start, then diffusive) and
 * purely ballistic walkers (MSD ∝ t², no diffusive regime).
 *
 * Method: every generator samples positions exactly at the requested times, however they are spaced
 * (log-spaced times keep the data small while covering decades). Brownian increments over h are normal with
 * variance 2Dh per component. The Ornstein–Uhlenbeck walker uses the exact joint update of velocity and
 * position over h (Gillespie 1996, eqs. 2.47–2.50 with c = 2D/τ²): with μ = e^{−h/τ},
 *   v ← μ v + σ_v n₁,  x ← x + τ(1 − μ) v_old + (κ_xv/σ_v) n₁ + √(σ_x² − κ_xv²/σ_v²) n₂,
 *   σ_v² = (D/τ)(1 − μ²),  σ_x² = 2Dτ[h/τ − 2(1 − μ) + (1 − μ²)/2],  κ_xv = D(1 − μ)²,
 * and starts from the stationary velocity distribution N(0, D/τ) per component, so that per component
 * ⟨Δx²⟩ = 2D[t − τ(1 − e^{−t/τ})] exactly.
 *
 * References: A. Einstein, Ann. Phys. 17, 549 (1905), doi:10.1002/andp.19053220806; G.E. Uhlenbeck,
 * L.S. Ornstein, Phys. Rev. 36, 823 (1930), doi:10.1103/PhysRev.36.823; D.T. Gillespie, "Exact numerical
 * simulation of the Ornstein–Uhlenbeck process and its integral", Phys. Rev. E 54, 2084 (1996),
 * doi:10.1103/PhysRevE.54.2084.
 *
 * @example
 * ```ts
 * import { brownianTracks, logTimes, trackSeries } from "./synthetic.ts";
 * import { streamFromSeed } from "./seed.ts";
 * const times = logTimes(0.01, 10, { count: 40 });
 * const tracks = brownianTracks(streamFromSeed("demo"), { dimension: 2, walkers: 100, D: 0.5, times });
 * const { msd } = trackSeries(tracks); // ≈ 4 · 0.5 · t
 * ```
 */
import type { RandomStream } from "../../engines/random.ts";
import { streamFromSeed } from "./seed.ts";
import type { RealisationTracks, TrackEnsemble } from "./tracks.ts";

/** Positions of `walkers` walkers at each sample time, frame-major (index k·walkers + w). */
export interface Tracks {
  readonly dimension: 2 | 3;
  readonly walkers: number;
  readonly t: Float64Array;
  readonly x: Float64Array;
  readonly y: Float64Array;
  /** Present iff dimension = 3. */
  readonly z: Float64Array | null;
}

export interface WalkerOptions {
  readonly dimension: 2 | 3;
  /** Number of walkers (≥ 1). */
  readonly walkers: number;
  /** Sample times, strictly increasing; positions at times[0] are the starting positions. */
  readonly times: ArrayLike<number>;
  /** Standard deviation per component of the Gaussian starting cloud about the origin (default 0). */
  readonly initialSpread?: number;
}

export interface BrownianOptions extends WalkerOptions {
  /** Diffusion coefficient D (> 0): per component ⟨Δx²⟩ = 2Dt. */
  readonly D: number;
}

export interface OrnsteinUhlenbeckOptions extends BrownianOptions {
  /** Velocity correlation time τ (> 0): C_v(s) = (D/τ) e^{−s/τ} per component. */
  readonly tau: number;
}

export interface BallisticOptions extends WalkerOptions {
  /** Standard deviation σ_v of each velocity component (> 0); velocities stay constant, MSD = dσ_v²t². */
  readonly speedSpread: number;
}

/**
 * `count` log-spaced times from tMin to tMax inclusive, preceded by 0 unless `withZero` is false.
 *
 * @example
 * ```ts
 * logTimes(0.01, 100, { count: 5 }); // [0, 0.01, 0.1, 1, 10, 100]
 * ```
 */
export function logTimes(
  tMin: number,
  tMax: number,
  options: { count: number; withZero?: boolean },
): Float64Array {
  const { count } = options;
  if (!(tMin > 0 && tMax > tMin && Number.isInteger(count) && count >= 2)) {
    throw new RangeError(`logTimes needs 0 < tMin < tMax and count ≥ 2, got ${tMin}, ${tMax}, ${count}`);
  }
  const off = options.withZero === false ? 0 : 1;
  const out = new Float64Array(count + off);
  const q = Math.log(tMax / tMin) / (count - 1);
  for (let i = 0; i < count; i++) out[off + i] = tMin * Math.exp(q * i);
  out[off + count - 1] = tMax;
  return out;
}

/** Independent Brownian walkers with diffusion coefficient D, sampled exactly at `times`. */
export function brownianTracks(rng: RandomStream, options: BrownianOptions): Tracks {
  checkWalkerOptions(options);
  positive(options.D, "D");
  const tr = allocate(options);
  start(rng, tr, options.initialSpread ?? 0);
  const { walkers: W, t } = tr;
  const comps = components(tr);
  for (let k = 1; k < t.length; k++) {
    const s = Math.sqrt(2 * options.D * (t[k] - t[k - 1]));
    for (const c of comps) {
      for (let w = 0; w < W; w++) c[k * W + w] = c[(k - 1) * W + w] + s * rng.normal();
    }
  }
  return tr;
}

/** Ornstein–Uhlenbeck velocity walkers (stationary velocities at start), sampled exactly at `times`. */
export function ornsteinUhlenbeckTracks(rng: RandomStream, options: OrnsteinUhlenbeckOptions): Tracks {
  checkWalkerOptions(options);
  positive(options.D, "D");
  positive(options.tau, "tau");
  const tr = allocate(options);
  start(rng, tr, options.initialSpread ?? 0);
  const { walkers: W, t } = tr;
  const comps = components(tr);
  const vSd = Math.sqrt(options.D / options.tau);
  const vel = comps.map(() => {
    const v = new Float64Array(W);
    for (let w = 0; w < W; w++) v[w] = vSd * rng.normal();
    return v;
  });
  const step = new Float64Array(4);
  for (let k = 1; k < t.length; k++) {
    ouStep(options.D, options.tau, t[k] - t[k - 1], step);
    const [mu, sv, a, b] = step;
    const drift = options.tau * (1 - mu);
    for (let ci = 0; ci < comps.length; ci++) {
      const c = comps[ci];
      const v = vel[ci];
      for (let w = 0; w < W; w++) {
        const n1 = rng.normal();
        const n2 = rng.normal();
        c[k * W + w] = c[(k - 1) * W + w] + drift * v[w] + a * n1 + b * n2;
        v[w] = mu * v[w] + sv * n1;
      }
    }
  }
  return tr;
}

/**
 * Coefficients of the exact OU step over h (Gillespie 1996 with c = 2D/τ²), written to out:
 * [μ, σ_v, κ_xv/σ_v, √(σ_x² − κ_xv²/σ_v²)], where κ_xv = (cτ²/2)(1 − μ)² = D(1 − μ)².
 */
export function ouStep(D: number, tau: number, h: number, out: Float64Array): Float64Array {
  const mu = Math.exp(-h / tau);
  const om = -Math.expm1(-h / tau); // 1 − μ, accurate for small h
  const om2 = -Math.expm1(-2 * h / tau); // 1 − μ²
  const varV = (D / tau) * om2;
  // σ_x² = cτ³[h/τ − 2(1 − μ) + (1 − μ²)/2] with c = 2D/τ²; the bracket is O((h/τ)³) for small h.
  const x = h / tau;
  const bracket = x < 1e-3 ? (x * x * x) / 3 - (x * x * x * x) / 4 : x - 2 * om + om2 / 2;
  const varX = 2 * D * tau * bracket;
  const cov = D * om * om;
  const sv = Math.sqrt(varV);
  const a = sv > 0 ? cov / sv : 0;
  out[0] = mu;
  out[1] = sv;
  out[2] = a;
  out[3] = Math.sqrt(Math.max(0, varX - a * a));
  return out;
}

/** Walkers with constant random velocities: x(t) = x(t₀) + v (t − t₀). */
export function ballisticTracks(rng: RandomStream, options: BallisticOptions): Tracks {
  checkWalkerOptions(options);
  positive(options.speedSpread, "speedSpread");
  const tr = allocate(options);
  start(rng, tr, options.initialSpread ?? 0);
  const { walkers: W, t } = tr;
  for (const c of components(tr)) {
    for (let w = 0; w < W; w++) {
      const v = options.speedSpread * rng.normal();
      for (let k = 1; k < t.length; k++) c[k * W + w] = c[w] + v * (t[k] - t[0]);
    }
  }
  return tr;
}

/** Per-realisation series computed from tracks. */
export interface TrackSeries {
  /** Lag times t − t₀. */
  readonly t: Float64Array;
  /** Mean-square displacement from the first frame over all walkers. */
  readonly msd: Float64Array;
  /** RMS radius of the walkers about their centroid. */
  readonly rmsRadius: Float64Array;
}

/**
 * MSD and RMS radius series of one set of tracks. With `removeDrift` the centroid displacement is subtracted
 * (as the observables do for the main cluster); for W independent walkers that lowers the expected MSD by the
 * factor (1 − 1/W).
 */
export function trackSeries(tracks: Tracks, options: { removeDrift?: boolean } = {}): TrackSeries {
  const { walkers: W, t } = tracks;
  const K = t.length;
  const comps = components(tracks);
  const msd = new Float64Array(K);
  const rms = new Float64Array(K);
  const lag = new Float64Array(K);
  const c0 = comps.map((c) => centroid(c, 0, W));
  for (let k = 0; k < K; k++) {
    lag[k] = t[k] - t[0];
    let sd = 0;
    let sr = 0;
    for (let ci = 0; ci < comps.length; ci++) {
      const c = comps[ci];
      const ck = centroid(c, k, W);
      const drift = options.removeDrift ? ck - c0[ci] : 0;
      for (let w = 0; w < W; w++) {
        const dx = c[k * W + w] - c[w] - drift;
        const rx = c[k * W + w] - ck;
        sd += dx * dx;
        sr += rx * rx;
      }
    }
    msd[k] = sd / W;
    rms[k] = Math.sqrt(sr / W);
  }
  return { t: lag, msd, rmsRadius: rms };
}

/** An ensemble of realisations in the shape `fitDiffusion` takes. */
export interface WalkerEnsemble {
  readonly t: Float64Array;
  readonly msd: Float64Array[];
  readonly rmsRadius: Float64Array[];
}

export type WalkerModel =
  | ({ readonly kind: "brownian" } & BrownianOptions)
  | ({ readonly kind: "ornstein-uhlenbeck" } & OrnsteinUhlenbeckOptions)
  | ({ readonly kind: "ballistic" } & BallisticOptions);

/**
 * `realisations` independent realisations of a walker model; realisation i uses the stream
 * `streamFromSeed(seed + "/" + i)`, so each is reproducible on its own.
 *
 * @example
 * ```ts
 * const ens = walkerEnsemble(
 *   { kind: "brownian", dimension: 3, walkers: 20, D: 1, times: logTimes(0.1, 100, { count: 30 }) },
 *   { realisations: 30, seed: "demo" },
 * );
 * ```
 */
export function walkerEnsemble(
  model: WalkerModel,
  options: { realisations: number; seed: string; removeDrift?: boolean },
): WalkerEnsemble {
  if (!Number.isInteger(options.realisations) || options.realisations < 1) {
    throw new RangeError(`realisations must be an integer ≥ 1, got ${options.realisations}`);
  }
  const msd: Float64Array[] = [];
  const rmsRadius: Float64Array[] = [];
  let t: Float64Array = new Float64Array(0);
  for (let i = 0; i < options.realisations; i++) {
    const tracks = modelTracks(streamFromSeed(`${options.seed}/${i}`), model);
    const s = trackSeries(tracks, { removeDrift: options.removeDrift });
    t = s.t;
    msd.push(s.msd);
    rmsRadius.push(s.rmsRadius);
  }
  return { t, msd, rmsRadius };
}

/** One realisation of a walker model. */
export function modelTracks(rng: RandomStream, model: WalkerModel): Tracks {
  return model.kind === "brownian"
    ? brownianTracks(rng, model)
    : model.kind === "ornstein-uhlenbeck"
    ? ornsteinUhlenbeckTracks(rng, model)
    : ballisticTracks(rng, model);
}

/** Walker tracks as the loss-aware estimators take them: every walker in the main cluster, its own unit. */
export function asRealisationTracks(tr: Tracks): RealisationTracks {
  return {
    objects: tr.walkers,
    x: tr.x,
    y: tr.y,
    z: tr.z,
    main: new Uint8Array(tr.x.length).fill(1),
    group: null,
  };
}

/**
 * `realisations` independent realisations of a walker model as a `TrackEnsemble` (realisation i from the
 * stream `seed/i`, as `walkerEnsemble`).
 *
 * @example
 * ```ts
 * const times = Float64Array.from({ length: 101 }, (_, k) => 0.1 * k);
 * const ens = walkerTrackEnsemble({ kind: "brownian", dimension: 2, walkers: 10, D: 0.2, times }, {
 *   realisations: 40,
 *   seed: "demo",
 * });
 * ```
 */
export function walkerTrackEnsemble(
  model: WalkerModel,
  options: { realisations: number; seed: string },
): TrackEnsemble {
  if (!Number.isInteger(options.realisations) || options.realisations < 1) {
    throw new RangeError(`realisations must be an integer ≥ 1, got ${options.realisations}`);
  }
  const realisations = Array.from(
    { length: options.realisations },
    (_, i) => asRealisationTracks(modelTracks(streamFromSeed(`${options.seed}/${i}`), model)),
  );
  return { dimension: model.dimension, t: Float64Array.from(model.times), realisations };
}

/** Half diffusers, half ballistic movers that leave the tracked set: data built to fool survivor averages. */
export interface CensoredMixtureOptions {
  readonly dimension: 2 | 3;
  /** Frame times, strictly increasing from 0. */
  readonly times: ArrayLike<number>;
  /** Brownian walkers with diffusion coefficient D (never removed). */
  readonly diffusers: number;
  readonly D: number;
  /** Ballistic movers (constant velocity, uniform direction). */
  readonly ballistic: number;
  /**
   * How ballistic movers leave the set (absent from every later frame):
   * - `rate`: exponential lifetimes with the given rate, independent of where they are (speed per component
   *   normal with standard deviation `speedSpread`);
   * - `front`: when their displacement reaches the diffusive front c√t with c² = 3·2dD; speeds uniform on
   *   (0, `maxSpeed`), so the survivors' mean square displacement E[v²t² | v < c/√t] = c²t/3 = 2dDt equals the
   *   diffusers' and the survivor average is exactly 2dDt although no survivor moves diffusively.
   */
  readonly removal:
    | { readonly kind: "rate"; readonly rate: number; readonly speedSpread: number }
    | { readonly kind: "front"; readonly maxSpeed: number };
  /** Standard deviation per component of the Gaussian starting cloud (default 0). */
  readonly initialSpread?: number;
}

/**
 * One realisation of `CensoredMixtureOptions` (diffusers first, then ballistic movers; all labelled main while
 * present). Brownian motion: A. Einstein, Ann. Phys. 17, 549 (1905); the front construction is derived here.
 */
export function censoredMixtureTracks(rng: RandomStream, o: CensoredMixtureOptions): RealisationTracks {
  positive(o.D, "D");
  const d = o.dimension;
  const b = brownianTracks(rng, {
    dimension: d,
    walkers: Math.max(1, o.diffusers),
    D: o.D,
    times: o.times,
    initialSpread: o.initialSpread,
  });
  const nb = o.diffusers, ns = o.ballistic, M = nb + ns, K = o.times.length;
  const x = new Float64Array(K * M), y = new Float64Array(K * M);
  const z = d === 3 ? new Float64Array(K * M) : null;
  const main = new Uint8Array(K * M);
  for (let k = 0; k < K; k++) {
    for (let j = 0; j < nb; j++) {
      x[k * M + j] = b.x[k * b.walkers + j];
      y[k * M + j] = b.y[k * b.walkers + j];
      if (z) z[k * M + j] = b.z![k * b.walkers + j];
      main[k * M + j] = 1;
    }
  }
  const spread = o.initialSpread ?? 0;
  const c2 = 3 * 2 * d * o.D;
  for (let j = 0; j < ns; j++) {
    const r0 = [spread * rng.normal(), spread * rng.normal(), d === 3 ? spread * rng.normal() : 0];
    let v: number[];
    let end: number;
    if (o.removal.kind === "rate") {
      const s = o.removal.speedSpread;
      v = [s * rng.normal(), s * rng.normal(), d === 3 ? s * rng.normal() : 0];
      end = -Math.log(1 - rng.uniform()) / o.removal.rate;
    } else {
      const speed = o.removal.maxSpeed * rng.uniform();
      const n = [rng.normal(), rng.normal(), d === 3 ? rng.normal() : 0];
      const norm = Math.hypot(n[0], n[1], n[2]);
      v = n.map((c) => (speed * c) / norm);
      end = speed > 0 ? c2 / (speed * speed) : Number.POSITIVE_INFINITY;
    }
    for (let k = 0; k < K; k++) {
      const q = k * M + nb + j;
      const tk = o.times[k];
      if (tk < end) {
        x[q] = r0[0] + v[0] * tk;
        y[q] = r0[1] + v[1] * tk;
        if (z) z[q] = r0[2] + v[2] * tk;
        main[q] = 1;
      } else {
        x[q] = y[q] = Number.NaN;
        if (z) z[q] = Number.NaN;
      }
    }
  }
  return { objects: M, x, y, z, main, group: null };
}

/** Brownian walkers that annihilate in pairs: ∂n/∂t = D∇²n − kn² in the mean-field limit. */
export interface AnnihilatingWalkerOptions {
  readonly dimension: 2 | 3;
  /** Walkers at t = 0, Gaussian about the origin with standard deviation `spread` per component. */
  readonly walkers: number;
  readonly spread: number;
  readonly D: number;
  /** Two walkers closer than `radius` annihilate together at `rate` per unit time (both removed). */
  readonly radius: number;
  readonly rate: number;
  /** Time step of the simulation. */
  readonly dt: number;
  /** Output times (multiples of dt, from 0) and radial bins [k·h, (k + 1)·h), k < bins, about the origin. */
  readonly times: readonly number[];
  readonly binWidth: number;
  readonly bins: number;
}

/**
 * The loss coefficient k of the mean-field equation of `annihilatingWalkerProfiles`: each pair closer than ε
 * reacts at rate λ and removes two walkers, so dn/dt = −2·(n²V_ε/2)·λ = −V_ε λ n², k = V_ε λ with V_ε the
 * volume of the ε-ball (πε² in 2D, 4πε³/3 in 3D). Valid when reactions are slow against diffusion over ε
 * (λε²/D ≪ 1: no depletion around each walker). Derived here from the pair density; the rate-equation limit of
 * reaction–diffusion particle models is standard (D.F. Calef, J.M. Deutch, Annu. Rev. Phys. Chem. 34, 493
 * (1983), doi:10.1146/annurev.pc.34.100183.002425).
 */
export function annihilationCoefficient(
  o: Pick<AnnihilatingWalkerOptions, "dimension" | "radius" | "rate">,
): number {
  const v = o.dimension === 2 ? Math.PI * o.radius ** 2 : (4 / 3) * Math.PI * o.radius ** 3;
  return v * o.rate;
}

/**
 * One realisation of annihilating Brownian walkers: the number density per annulus area (2D) or shell volume
 * (3D) at each output time, index j·bins + k (a `ProfileEnsemble` realisation). Per step dt: Brownian moves
 * (variance 2D·dt per component), then every pair closer than ε (cell list, pairs in random order, each walker
 * at most once) annihilates with probability λ·dt.
 */
export function annihilatingWalkerProfiles(rng: RandomStream, o: AnnihilatingWalkerOptions): Float64Array {
  positive(o.D, "D");
  positive(o.dt, "dt");
  positive(o.radius, "radius");
  const d = o.dimension;
  const N = o.walkers;
  const x = new Float64Array(N), y = new Float64Array(N), z = new Float64Array(N);
  const alive = new Uint8Array(N).fill(1);
  for (let i = 0; i < N; i++) {
    x[i] = o.spread * rng.normal();
    y[i] = o.spread * rng.normal();
    if (d === 3) z[i] = o.spread * rng.normal();
  }
  const K = o.bins, h = o.binWidth;
  const out = new Float64Array(o.times.length * K);
  const measure = Float64Array.from(
    { length: K },
    (_, k) =>
      d === 2
        ? Math.PI * (((k + 1) * h) ** 2 - (k * h) ** 2)
        : (4 / 3) * Math.PI * (((k + 1) * h) ** 3 - (k * h) ** 3),
  );
  const record = (j: number) => {
    for (let i = 0; i < N; i++) {
      if (!alive[i]) continue;
      const r = Math.sqrt(x[i] * x[i] + y[i] * y[i] + z[i] * z[i]);
      const k = Math.floor(r / h);
      if (k < K) out[j * K + k] += 1;
    }
    for (let k = 0; k < K; k++) out[j * K + k] /= measure[k];
  };
  const sd = Math.sqrt(2 * o.D * o.dt);
  const p = o.rate * o.dt;
  const eps = o.radius, eps2 = eps * eps;
  // Cell list of cell size ε in a hash table of linked lists (head/next), cells compared exactly.
  const SIZE = 1 << 16;
  const head = new Int32Array(SIZE);
  const next = new Int32Array(N);
  const cx = new Int32Array(N), cy = new Int32Array(N), cz = new Int32Array(N);
  const hash = (a: number, b: number, c: number) =>
    ((Math.imul(a, 73856093) ^ Math.imul(b, 19349663) ^ Math.imul(c, 83492791)) >>> 0) & (SIZE - 1);
  const pairs: number[] = [];
  const span = d === 3 ? 1 : 0;
  let t = 0;
  let j = 0;
  for (; j < o.times.length && o.times[j] <= 1e-12; j++) record(j);
  while (j < o.times.length) {
    head.fill(-1);
    for (let i = 0; i < N; i++) {
      if (!alive[i]) continue;
      x[i] += sd * rng.normal();
      y[i] += sd * rng.normal();
      if (d === 3) z[i] += sd * rng.normal();
      cx[i] = Math.floor(x[i] / eps);
      cy[i] = Math.floor(y[i] / eps);
      cz[i] = d === 3 ? Math.floor(z[i] / eps) : 0;
      const hh = hash(cx[i], cy[i], cz[i]);
      next[i] = head[hh];
      head[hh] = i;
    }
    pairs.length = 0;
    for (let i = 0; i < N; i++) {
      if (!alive[i]) continue;
      for (let a = -1; a <= 1; a++) {
        for (let b = -1; b <= 1; b++) {
          for (let c = -span; c <= span; c++) {
            const X = cx[i] + a, Y = cy[i] + b, Z = cz[i] + c;
            for (let q = head[hash(X, Y, Z)]; q >= 0; q = next[q]) {
              if (q <= i || cx[q] !== X || cy[q] !== Y || cz[q] !== Z) continue;
              if ((x[i] - x[q]) ** 2 + (y[i] - y[q]) ** 2 + (z[i] - z[q]) ** 2 < eps2) pairs.push(i, q);
            }
          }
        }
      }
    }
    // Random order so no walker is favoured; each walker reacts at most once per step.
    const m = pairs.length / 2;
    for (let u = m - 1; u > 0; u--) {
      const v = rng.integer(u + 1);
      const a0 = pairs[2 * u], a1 = pairs[2 * u + 1];
      pairs[2 * u] = pairs[2 * v];
      pairs[2 * u + 1] = pairs[2 * v + 1];
      pairs[2 * v] = a0;
      pairs[2 * v + 1] = a1;
    }
    for (let u = 0; u < m; u++) {
      const a = pairs[2 * u], b = pairs[2 * u + 1];
      if (alive[a] && alive[b] && rng.uniform() < p) alive[a] = alive[b] = 0;
    }
    t += o.dt;
    while (j < o.times.length && o.times[j] <= t + 1e-9) record(j++);
  }
  return out;
}

function checkWalkerOptions(o: WalkerOptions): void {
  if (o.dimension !== 2 && o.dimension !== 3) {
    throw new RangeError(`dimension must be 2 or 3, got ${o.dimension}`);
  }
  if (!Number.isInteger(o.walkers) || o.walkers < 1) {
    throw new RangeError(`walkers must be an integer ≥ 1, got ${o.walkers}`);
  }
  if (o.times.length < 1) throw new RangeError("times must hold at least one time");
  for (let k = 0; k < o.times.length; k++) {
    if (!Number.isFinite(o.times[k]) || (k > 0 && !(o.times[k] > o.times[k - 1]))) {
      throw new RangeError(`times must be finite and strictly increasing (index ${k}: ${o.times[k]})`);
    }
  }
  if (o.initialSpread !== undefined && !(o.initialSpread >= 0)) {
    throw new RangeError(`initialSpread must be ≥ 0, got ${o.initialSpread}`);
  }
}

function positive(v: number, name: string): void {
  if (!(v > 0 && Number.isFinite(v))) {
    throw new RangeError(`${name} must be a positive finite number, got ${v}`);
  }
}

function allocate(o: WalkerOptions): Tracks {
  const size = o.walkers * o.times.length;
  return {
    dimension: o.dimension,
    walkers: o.walkers,
    t: Float64Array.from(o.times),
    x: new Float64Array(size),
    y: new Float64Array(size),
    z: o.dimension === 3 ? new Float64Array(size) : null,
  };
}

function components(tr: Tracks): Float64Array[] {
  return tr.z ? [tr.x, tr.y, tr.z] : [tr.x, tr.y];
}

function start(rng: RandomStream, tr: Tracks, spread: number): void {
  if (spread === 0) return;
  for (const c of components(tr)) for (let w = 0; w < tr.walkers; w++) c[w] = spread * rng.normal();
}

function centroid(c: Float64Array, k: number, W: number): number {
  let s = 0;
  for (let w = 0; w < W; w++) s += c[k * W + w];
  return s / W;
}

/** A frozen random divergence-free velocity field (see `randomFourierField`). */
export interface FourierField {
  readonly dimension: 2 | 3;
  /** Number of modes M. */
  readonly modes: number;
  /** Evaluates the field at n points (signature of `VelocityField` in correlations.ts). */
  evaluate(
    n: number,
    x: Float64Array,
    y: Float64Array,
    z: Float64Array | null,
    u: Float64Array,
    v: Float64Array,
    w: Float64Array | null,
  ): void;
}

/**
 * A random isotropic divergence-free field with all its energy on the shell |k| = k₀:
 * u(x) = Σ_m A a_m cos(k_m·x + φ_m), with k_m = k₀k̂_m, k̂_m uniform on the circle or sphere, a_m a unit
 * vector normal to k_m (random in that plane in 3D), φ_m uniform, and A = √(2d u′²/M) so that ⟨|u|²⟩ = d u′².
 * Each mode is solenoidal (a_m·k_m = 0), hence so is the sum. Over the random draws its two-point
 * correlations are those of isotropic turbulence with E(k) ∝ δ(k − k₀): 3D f = 3(sin s − s cos s)/s³,
 * 2D f = 2J₁(s)/s, s = k₀r (Pope 2000, §6.5; Batchelor 1953, ch. 3).
 *
 * References: R.H. Kraichnan, "Diffusion by a random velocity field", Phys. Fluids 13, 22 (1970),
 * doi:10.1063/1.1692799; S.B. Pope, Turbulent Flows (CUP 2000), doi:10.1017/CBO9780511840531.
 */
export function randomFourierField(
  rng: RandomStream,
  options: { dimension: 2 | 3; modes: number; k0: number; uPrime2?: number },
): FourierField {
  const { dimension: d, modes: M, k0 } = options;
  if (d !== 2 && d !== 3) throw new RangeError(`dimension must be 2 or 3, got ${d}`);
  if (!Number.isInteger(M) || M < 1) throw new RangeError(`modes must be an integer ≥ 1, got ${M}`);
  positive(k0, "k0");
  const u2 = options.uPrime2 ?? 1;
  positive(u2, "uPrime2");
  const A = Math.sqrt((2 * d * u2) / M);
  const kx = new Float64Array(M);
  const ky = new Float64Array(M);
  const kz = new Float64Array(M);
  const ax = new Float64Array(M);
  const ay = new Float64Array(M);
  const az = new Float64Array(M);
  const ph = new Float64Array(M);
  for (let m = 0; m < M; m++) {
    if (d === 2) {
      const th = 2 * Math.PI * rng.uniform();
      kx[m] = k0 * Math.cos(th);
      ky[m] = k0 * Math.sin(th);
      ax[m] = -A * Math.sin(th);
      ay[m] = A * Math.cos(th);
    } else {
      // Uniform direction on the sphere (Marsaglia 1972 via normals), then a random unit vector normal to it.
      let nx = rng.normal();
      let ny = rng.normal();
      let nz = rng.normal();
      const nn = Math.hypot(nx, ny, nz);
      nx /= nn;
      ny /= nn;
      nz /= nn;
      let px = rng.normal();
      let py = rng.normal();
      let pz = rng.normal();
      const dot = px * nx + py * ny + pz * nz;
      px -= dot * nx;
      py -= dot * ny;
      pz -= dot * nz;
      const pn = Math.hypot(px, py, pz);
      kx[m] = k0 * nx;
      ky[m] = k0 * ny;
      kz[m] = k0 * nz;
      ax[m] = (A * px) / pn;
      ay[m] = (A * py) / pn;
      az[m] = (A * pz) / pn;
    }
    ph[m] = 2 * Math.PI * rng.uniform();
  }
  return {
    dimension: d,
    modes: M,
    evaluate(n, x, y, z, u, v, w) {
      for (let i = 0; i < n; i++) {
        const xi = x[i];
        const yi = y[i];
        const zi = z ? z[i] : 0;
        let su = 0;
        let sv = 0;
        let sw = 0;
        for (let m = 0; m < M; m++) {
          const c = Math.cos(kx[m] * xi + ky[m] * yi + kz[m] * zi + ph[m]);
          su += ax[m] * c;
          sv += ay[m] * c;
          sw += az[m] * c;
        }
        u[i] = su;
        v[i] = sv;
        if (w) w[i] = sw;
      }
    },
  };
}
