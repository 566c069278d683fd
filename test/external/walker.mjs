#!/usr/bin/env node
// A small stand-in for a group's own simulation program, driven by spindrift's external-program engine in the
// example study (examples/external-walkers.yaml) and the tests. Plain Node.js (no packages), so it runs wherever
// the spindrift launcher does.
//
// It writes Brownian random-walk tracks with a known diffusion coefficient D: N walkers start in an isotropic
// Gaussian cloud of standard deviation sigma0 per component, and each time step dt every coordinate moves by an
// independent normal increment of variance 2·D·dt (Einstein, Ann. Phys. 17, 549 (1905),
// doi:10.1002/andp.19053220806), so the 2D mean-square displacement is exactly 4·D·t.
//
// Inputs reach it in all three ways spindrift offers:
//   command line  --seed <0…2^64−1> --out <file> --diffusion <D> --duration <T> --dt <dt> --config <file>
//                 [--fault none|exit|hang|hang-hard|no-output|malformed|abort] [--delay-ms <ms>]
//   environment   WALKER_COUNT (number of walkers N)
//   input file    --config names a JSON file: { "sigma0": <number>, "label": <text> }
// Output: CSV with the columns of `spindrift export` (t, id, x, y, circulation), one row per walker per frame
// t = k·dt, k = 0 … round(T/dt); ids 0 … N−1; circulation +1 for even ids, −1 for odd ones. Numbers are written
// in their shortest round-trip form, so spindrift reads back exactly the doubles computed here.
//
// Randomness: SplitMix64 (G.L. Steele, D. Lea, C.H. Flood, OOPSLA 2014, doi:10.1145/2660193.2660195) seeded with
// --seed; uniforms take the top 53 bits; normals by the Box–Muller transform (G.E.P. Box, M.E. Muller,
// Ann. Math. Stat. 29, 610 (1958), doi:10.1214/aoms/1177706645). The same arguments give the same bytes.
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
  for (const k of ["seed", "out", "config", "diffusion", "duration", "dt"]) {
    if (opts[k] === undefined) fail(`missing --${k}`);
  }
  return opts;
}

/** SplitMix64: returns a function giving the next 64-bit output as a BigInt. */
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

function normals(next) {
  let spare = null;
  const uniform = () => Number(next() >> 11n) / 9007199254740992; // [0, 1), 53 bits
  return () => {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
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
  const normal = normals(splitMix64(opts.seed));
  const steps = Math.round(opts.duration / opts.dt);
  const step = Math.sqrt(2 * opts.diffusion * opts.dt);
  const x = new Float64Array(count);
  const y = new Float64Array(count);
  for (let i = 0; i < count; i++) {
    x[i] = sigma0 * normal();
    y[i] = sigma0 * normal();
  }
  const lines = ["t,id,x,y,circulation"];
  for (let k = 0; k <= steps; k++) {
    if (k > 0) {
      for (let i = 0; i < count; i++) {
        x[i] += step * normal();
        y[i] += step * normal();
      }
    }
    const t = k * opts.dt;
    for (let i = 0; i < count; i++) {
      const xText = opts.fault === "malformed" && k === 5 && i === 3 ? "1.2.3" : String(x[i]);
      lines.push(`${t},${i},${xText},${y[i]},${i % 2 === 0 ? 1 : -1}`);
    }
  }
  if (opts.fault !== "no-output") writeFileSync(opts.out, lines.join("\n") + "\n");
  console.log(
    `walker: wrote ${steps + 1} frames of ${count} walkers${
      opts.fault === "no-output" ? " (not really)" : ""
    }`,
  );
}
