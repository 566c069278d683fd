/**
 * What the ensemble analysis needs from particular engines beyond their declared capabilities: the flow domain
 * (point vortices: disk, periodic or unbounded; Gross–Pitaevskii: the trap, or the periodic grid)
 * (for the fitting window's "cluster reaches 1/4 of the domain" rule and for homogeneous-decay densities) and
 * a velocity field at arbitrary probe points (for velocity correlations). The engine contract has no hook for
 * either yet, so this is the one place that knows engine parameter shapes; everything else in the analysis
 * reads capabilities only. (When the contract grows an optional `velocityAt`/`domain` capability, this file
 * becomes a lookup of it.)
 *
 * The 2D point-vortex velocity at probes reuses the engine's own kernels (`engines/point-vortex/velocity.ts`,
 * `periodic.ts`): probes are appended as vortices of zero circulation, so they feel every vortex (and image)
 * and act on nothing. The cost is O((N + P)²) per snapshot, fine for the few hundred probes used here.
 *
 * References: P.G. Saffman, Vortex Dynamics (CUP 1992) §7.1–7.3, doi:10.1017/CBO9780511624063 (point-vortex
 * velocity); J.B. Weiss, J.C. McWilliams, Phys. Fluids A 3, 835 (1991), doi:10.1063/1.858014 (periodic box).
 */
import type { VelocityField } from "../estimators/correlations.ts";
import { velocityDisk, velocityUnbounded } from "../../engines/point-vortex/velocity.ts";
import { velocityPeriodic } from "../../engines/point-vortex/periodic.ts";

/** The flow domain of a parameter point, as far as the analysis knows it. */
export interface DomainInfo {
  readonly kind: "unbounded" | "disk" | "box" | "periodic" | "unknown";
  /** Linear size: disk diameter or box side (length); null when unbounded or unknown. */
  readonly size: number | null;
  /** Area (2D) of the domain; null when unbounded or unknown. */
  readonly area: number | null;
}

const POINT_VORTEX_ID = "point-vortex-2d";
const GROSS_PITAEVSKII_ID = "gross-pitaevskii-2d";

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

type Domain =
  | { kind: "unbounded" }
  | { kind: "disk"; radius: number }
  | { kind: "periodic"; side: number };

function pointVortexDomain(params: unknown): Domain | null {
  if (!isRecord(params) || !isRecord(params.domain)) return { kind: "unbounded" };
  const d = params.domain;
  if (d.kind === "unbounded") return { kind: "unbounded" };
  if (d.kind === "disk" && typeof d.radius === "number" && d.radius > 0) {
    return { kind: "disk", radius: d.radius };
  }
  if (d.kind === "periodic" && typeof d.side === "number" && d.side > 0) {
    return { kind: "periodic", side: d.side };
  }
  return null;
}

/**
 * The trap of a Gross–Pitaevskii point: disk (wall radius R), square box (side S), or the periodic grid square
 * (side points × spacing); null when unreadable.
 */
function gpDomain(params: unknown): DomainInfo | null {
  if (!isRecord(params) || !isRecord(params.trap) || !isRecord(params.grid)) return null;
  const t = params.trap, g = params.grid;
  if (t.kind === "disk" && typeof t.radius === "number") {
    return { kind: "disk", size: 2 * t.radius, area: Math.PI * t.radius ** 2 };
  }
  if (t.kind === "box" && typeof t.side === "number") return { kind: "box", size: t.side, area: t.side ** 2 };
  if (t.kind === "periodic" && typeof g.points === "number" && typeof g.spacing === "number") {
    const side = g.points * g.spacing;
    return { kind: "periodic", size: side, area: side * side };
  }
  return null;
}

/** The domain of a point of an engine (unknown for engines this file does not know). */
export function domainOf(engineId: string, params: unknown): DomainInfo {
  if (engineId === GROSS_PITAEVSKII_ID) {
    return gpDomain(params) ?? { kind: "unknown", size: null, area: null };
  }
  if (engineId !== POINT_VORTEX_ID) return { kind: "unknown", size: null, area: null };
  const d = pointVortexDomain(params);
  if (d === null) return { kind: "unknown", size: null, area: null };
  switch (d.kind) {
    case "unbounded":
      return { kind: "unbounded", size: null, area: null };
    case "disk":
      return { kind: "disk", size: 2 * d.radius, area: Math.PI * d.radius * d.radius };
    case "periodic":
      return { kind: "periodic", size: d.side, area: d.side * d.side };
  }
}

/** Builds the velocity field of one snapshot's vortices, evaluated at probe points. */
export type SnapshotField = (
  n: number,
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  circulation: ArrayLike<number>,
) => VelocityField;

/**
 * A factory of snapshot velocity fields for this engine and point, or the reason there is none (engines that
 * do not compute a velocity field, e.g. imported tracks and, for now, 3D filaments).
 */
export function velocityFieldFor(
  engineId: string,
  params: unknown,
): { readonly field: SnapshotField; readonly reason: null } | {
  readonly field: null;
  readonly reason: string;
} {
  if (engineId !== POINT_VORTEX_ID) {
    return {
      field: null,
      reason:
        `the engine '${engineId}' provides no velocity field at probe points (only the 2D point-vortex ` +
        `engine does)`,
    };
  }
  const domain = pointVortexDomain(params);
  if (domain === null) return { field: null, reason: "the point's domain parameters are not readable" };
  return { field: pointVortexField(domain), reason: null };
}

/** Point-vortex field at probes: probes appended with zero circulation to the engine's direct-sum kernels. */
function pointVortexField(domain: Domain): SnapshotField {
  let cap = 0;
  let X = new Float64Array(0), Y = new Float64Array(0), G = new Float64Array(0);
  let U = new Float64Array(0), V = new Float64Array(0);
  const ensure = (m: number) => {
    if (m <= cap) return;
    cap = Math.max(m, 2 * cap);
    X = new Float64Array(cap);
    Y = new Float64Array(cap);
    G = new Float64Array(cap);
    U = new Float64Array(cap);
    V = new Float64Array(cap);
  };
  return (nv, vx, vy, vg) => (np, px, py, _pz, u, v) => {
    const m = nv + np;
    ensure(m);
    for (let i = 0; i < nv; i++) {
      X[i] = vx[i];
      Y[i] = vy[i];
      G[i] = vg[i];
    }
    for (let i = 0; i < np; i++) {
      X[nv + i] = px[i];
      Y[nv + i] = py[i];
      G[nv + i] = 0;
    }
    if (domain.kind === "unbounded") velocityUnbounded(m, X, Y, G, U, V);
    else if (domain.kind === "disk") velocityDisk(m, X, Y, G, domain.radius, U, V);
    else velocityPeriodic(m, X, Y, G, domain.side, U, V);
    for (let i = 0; i < np; i++) {
      u[i] = U[nv + i];
      v[i] = V[nv + i];
    }
  };
}
