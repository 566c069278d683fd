#!/usr/bin/env node
// A small stand-in for a group's own simulation program, driven by spindrift's external-program engine in the
// example study (examples/external-walkers.yaml) and the tests. Plain Node.js (no packages), so it runs wherever
// the spindrift launcher does.
//
// It writes random-walk tracks with a known diffusion coefficient D: N walkers start in an isotropic Gaussian
// cloud of standard deviation sigma0 per component; each velocity component is an Ornstein–Uhlenbeck process
// with correlation time tau, started from its stationary law N(0, D/tau), so every displacement component is
// exactly Gaussian with variance
//   ⟨Δx²⟩(t) = 2D [t − tau (1 − e^{−t/tau})]     (Uhlenbeck & Ornstein, Phys. Rev. 36, 823 (1930),
//                                                  doi:10.1103/PhysRev.36.823),
// ballistic for t ≪ tau and diffusive with coefficient D for t ≫ tau, like a vortex in a spreading cluster. The
// positions and velocities are advanced with the exact discretisation over a step dt (Gillespie, Phys. Rev. E 54,
// 2084 (1996), doi:10.1103/PhysRevE.54.2084): with mu = e^{−dt/tau},
//   v' = mu v + ξ_v,                 Var ξ_v = (D/tau)(1 − mu²),
//   x' = x + tau (1 − mu) v + ξ_x,   Var ξ_x = 2D [dt − 2 tau (1 − mu) + (tau/2)(1 − mu²)],
//   Cov(ξ_x, ξ_v) = D (1 − mu)².
//
// Inputs reach it in all three ways spindrift offers:
//   command line  --seed <0…2^64−1> --out <file> --diffusion <D> --tau <tau> --duration <T> --dt <dt>
//                 --config <file> [--fault none|exit|hang|hang-hard|no-output|malformed|abort] [--delay-ms <ms>]
//   environment   WALKER_COUNT (number of walkers N)
//   input file    --config names a JSON file: { "sigma0": <number>, "label": <text> }
// Output: CSV with the columns of `spindrift export` (t, id, x, y, circulation), one row per walker per frame
// t = k·dt, k = 0 … round(T/dt); ids 0 … N−1; circulation +1 for even ids, −1 for odd ones. Numbers are written
// in their shortest round-trip form, so spindrift reads back exactly the doubles computed here.
//
// Randomness: xoshiro128** (D. Blackman, S. Vigna, ACM TOMS 47(4), 36 (2021), doi:10.1145/3460772) whose state is
// two outputs of SplitMix64 (G.L. Steele, D. Lea, C.H. Flood, OOPSLA 2014, doi:10.1145/2660193.2660195) seeded
// with --seed, as Blackman & Vigna recommend; uniforms take 53 bits of two outputs; normals by the Box–Muller
// transform (G.E.P. Box, M.E. Muller, Ann. Math. Stat. 29, 610 (1958), doi:10.1214/aoms/1177706645). Draw order:
// the 2N initial coordinates (x, y of walker 0, then of walker 1, …), the 2N initial velocities, then per step and
// coordinate the pair (n₁, n₂). The same arguments give the same bytes.
//
// Faults (for the tests): exit — message on stderr, exit code 3; hang — write walker.pid, then wait forever;
// hang-hard — the same but ignore SIGTERM and SIGINT; no-output — exit 0 without writing; malformed — write an
// unreadable x value; abort — end by SIGABRT. --delay-ms sleeps before writing (slow realisations).
import { readFileSync, writeFileSync } from "node:fs";

const MASK64 = (1n << 64n) - 1n;

function fail(message) {
  process.stderr.write(`walker: ${message}\n`);
  process.exit(2);
}

function parseArgs(argv) {
  const opts = { fault: "none", delayMs: 0 };
  for (let i = 0; i < argv.length; i += 2) {
    const key = argv[i];
    const value = argv[i + 1];
    if (value === undefined) fail(`option ${key} needs a value`);
    switch (key) {
      case "--seed":
        if (!/^\d+$/.test(value) || BigInt(value) > MASK64) {
          fail(`--seed must be an integer in [0, 2^64), got '${value}'`);
        }
        opts.seed = BigInt(value);
        break;
      case "--out":
        opts.out = value;
        break;
      case "--config":
        opts.config = value;
        break;
      case "--diffusion":
      case "--tau":
      case "--duration":
      case "--dt": {
        const v = Number(value);
        if (!(v > 0 && Number.isFinite(v))) fail(`${key} must be a positive number, got '${value}'`);
        opts[key.slice(2)] = v;
        break;
      }
      case "--fault":
        if (!["none", "exit", "hang", "hang-hard", "no-output", "malformed", "abort"].includes(value)) {
          fail(`unknown --fault '${value}'`);
        }
        opts.fault = value;
        break;
      case "--delay-ms":
        opts.delayMs = Number(value);
        if (!(opts.delayMs >= 0)) fail(`--delay-ms must be ≥ 0, got '${value}'`);
        break;
      default:
        fail(`unknown option '${key}'`);
    }
  }
  for (const k of ["seed", "out", "config", "diffusion", "tau", "duration", "dt"]) {
    if (opts[k] === undefined) fail(`missing --${k}`);
  }
  return opts;
}

/** SplitMix64 (64-bit state, BigInt): used only to expand --seed into the generator's state. */
function splitMix64(seed) {
  let state = seed & MASK64;
  return () => {
    state = (state + 0x9e3779b97f4a7c15n) & MASK64;
    let z = state;
    z = ((z ^ (z >> 30n)) * 0xbf58476d1ce4e5b9n) & MASK64;
    z = ((z ^ (z >> 27n)) * 0x94d049bb133111ebn) & MASK64;
    return z ^ (z >> 31n);
  };
}

/** xoshiro128** seeded with two SplitMix64 outputs; returns a function giving uniforms in [0, 1) (53 bits). */
function uniforms(seed) {
  const mix = splitMix64(seed);
  const a = mix();
  const b = mix();
  const s = Uint32Array.of(
    Number(a & 0xffffffffn),
    Number(a >> 32n),
    Number(b & 0xffffffffn),
    Number(b >> 32n),
  );
  if ((s[0] | s[1] | s[2] | s[3]) === 0) s[0] = 1;
  const rotl = (x, k) => (x << k) | (x >>> (32 - k));
  const next = () => {
    const result = Math.imul(rotl(Math.imul(s[1], 5), 7), 9) >>> 0;
    const t = s[1] << 9;
    s[2] ^= s[0];
    s[3] ^= s[1];
    s[1] ^= s[2];
    s[0] ^= s[3];
    s[2] ^= t;
    s[3] = rotl(s[3], 11);
    return result;
  };
  return () => ((next() >>> 5) * 67108864 + (next() >>> 6)) / 9007199254740992;
}

function normals(uniform) {
  let spare = null;
  return () => {
    if (spare !== null) {
      const v = spare;
      spare = null;
      return v;
    }
    const r = Math.sqrt(-2 * Math.log(1 - uniform()));
    const phi = 2 * Math.PI * uniform();
    spare = r * Math.sin(phi);
    return r * Math.cos(phi);
  };
}

const opts = parseArgs(process.argv.slice(2));
const count = Number(process.env.WALKER_COUNT ?? "");
if (!Number.isInteger(count) || count < 1) {
  fail(`WALKER_COUNT must be a whole number ≥ 1, got '${process.env.WALKER_COUNT}'`);
}
let config;
try {
  config = JSON.parse(readFileSync(opts.config, "utf8"));
} catch (e) {
  fail(`cannot read the config file '${opts.config}': ${e.message}`);
}
const sigma0 = Number(config.sigma0);
if (!(sigma0 >= 0 && Number.isFinite(sigma0))) {
  fail(`config sigma0 must be a number ≥ 0, got ${config.sigma0}`);
}

console.log(`walker: ${config.label ?? "run"}: ${count} walkers, D = ${opts.diffusion}, seed ${opts.seed}`);

if (opts.fault === "exit") {
  process.stderr.write("walker: failing on purpose (fault=exit)\n");
  process.exit(3);
}
if (opts.fault === "abort") process.abort();
if (opts.fault === "hang" || opts.fault === "hang-hard") {
  writeFileSync("walker.pid", `${process.pid}\n`);
  if (opts.fault === "hang-hard") {
    process.on("SIGTERM", () => console.log("walker: ignoring SIGTERM"));
    process.on("SIGINT", () => console.log("walker: ignoring SIGINT"));
  }
  console.log("walker: hanging on purpose");
  setInterval(() => {}, 1 << 30);
} else {
  setTimeout(run, opts.delayMs);
}

function run() {
  const normal = normals(uniforms(opts.seed));
  const { diffusion: D, tau, dt: h } = opts;
  const steps = Math.round(opts.duration / h);
  const mu = Math.exp(-h / tau);
  const sv = Math.sqrt((D / tau) * (1 - mu * mu));
  const varX = 2 * D * (h - 2 * tau * (1 - mu) + (tau / 2) * (1 - mu * mu));
  const a = (D * (1 - mu) * (1 - mu)) / sv; // ξ_x = a·n₁ + b·n₂ with ξ_v = sv·n₁
  const b = Math.sqrt(Math.max(0, varX - a * a));
  const drift = tau * (1 - mu);
  const vStat = Math.sqrt(D / tau);
  const pos = new Float64Array(2 * count); // x₀, y₀, x₁, y₁, …
  const vel = new Float64Array(2 * count);
  for (let c = 0; c < 2 * count; c++) pos[c] = sigma0 * normal();
  for (let c = 0; c < 2 * count; c++) vel[c] = vStat * normal();
  const lines = ["t,id,x,y,circulation"];
  for (let k = 0; k <= steps; k++) {
    if (k > 0) {
      for (let c = 0; c < 2 * count; c++) {
        const n1 = normal();
        const n2 = normal();
        pos[c] += drift * vel[c] + a * n1 + b * n2;
        vel[c] = mu * vel[c] + sv * n1;
      }
    }
    const t = k * h;
    for (let i = 0; i < count; i++) {
      const xText = opts.fault === "malformed" && k === 5 && i === 3 ? "1.2.3" : String(pos[2 * i]);
      lines.push(`${t},${i},${xText},${pos[2 * i + 1]},${i % 2 === 0 ? 1 : -1}`);
    }
  }
  if (opts.fault !== "no-output") writeFileSync(opts.out, lines.join("\n") + "\n");
  console.log(
    `walker: wrote ${steps + 1} frames of ${count} walkers${
      opts.fault === "no-output" ? " (not really)" : ""
    }`,
  );
}
