/**
 * The filament engine's pre-flight hint: filament points in the first frame, from the initial line length and
 * the point spacing δ (`resolution`), and the point cap `numerics.maxPoints` the line may grow to.
 *
 * Initial line length: a ring 2πR; colliding rings 2·2πR; a Kelvin wave about the box side L (the helix
 * lengthens it by √(1 + (kA)²), negligible for kA ≪ 1); a ring cloud count·2πμ, or the target line density
 * times the ball volume 4πR_c³/3; explicit loops their polygon length. Loops read from a file: unknown.
 */
import type { SizeHint } from "../contract.ts";
import type { FilamentParams } from "./params.ts";

type Point = readonly [number, number, number];

function polygonLength(loop: readonly Point[]): number {
  let s = 0;
  for (let i = 0; i < loop.length; i++) {
    const a = loop[i], b = loop[(i + 1) % loop.length];
    s += Math.hypot(b[0] - a[0], b[1] - a[1], b[2] - a[2]);
  }
  return s;
}

function initialLength(p: FilamentParams): number | null {
  const init = p.initial;
  switch (init.kind) {
    case "ring":
      return 2 * Math.PI * init.radius;
    case "ring-pair":
      return 4 * Math.PI * init.radius;
    case "helix":
      return p.domain.kind === "periodic" ? p.domain.size : null;
    case "ring-ball": {
      const mu = typeof init.radius === "number" ? init.radius : init.radius.mean;
      if (init.count !== undefined) return init.count * 2 * Math.PI * mu;
      return (init.targetLineDensity ?? 0) * (4 / 3) * Math.PI * init.cloudRadius ** 3;
    }
    case "given":
      return init.loops ? init.loops.reduce((s, l) => s + polygonLength(l), 0) : null;
  }
}

export function filamentSizeHint(params: FilamentParams): SizeHint | undefined {
  const length = initialLength(params);
  if (length === null) return undefined;
  const objects = Math.max(3, Math.ceil(length / params.resolution));
  return { objects, maxObjects: Math.max(objects, params.numerics.maxPoints) };
}
