/**
 * Report section "Condensate": density and phase images of the first and last stored frame of one realisation,
 * for engines that store field snapshots (e.g. gross-pitaevskii-2d), with that frame's detected vortices drawn
 * on top. Self-contained: PNG images inlined as data URIs (npm `fast-png`), vortex markers as inline SVG, no
 * script. The page builder inserts the returned HTML as is; without snapshots the section is omitted.
 *
 * Colour scales: density on a viridis-like ramp from 0 to the image's largest value; phase on a cyclic hue wheel
 * (−π → π). Markers: filled red disks for circulation +κ, open white circles for −κ.
 *
 * @example
 * ```ts
 * const html = buildFieldSnapshotSection(db, studyId); // "" when the study has no snapshots
 * ```
 */
import type { DatabaseSync } from "node:sqlite";
import { Buffer } from "node:buffer";
import { encode } from "fast-png";
import { frameArrays, readFrameAt } from "../store/frames.ts";
import {
  firstRealisationWithSnapshots,
  readFieldSnapshots,
  type StoredFieldImage,
} from "../store/snapshots.ts";
import { escapeHtml, formatNumber } from "./html.ts";

/** Viridis control points (matplotlib's colormap, sampled at tenths). */
const VIRIDIS = [
  [68, 1, 84],
  [72, 40, 120],
  [62, 73, 137],
  [49, 104, 142],
  [38, 130, 142],
  [31, 158, 137],
  [53, 183, 121],
  [110, 206, 88],
  [181, 222, 43],
  [253, 231, 37],
  [253, 231, 37],
];

function viridis(u: number): [number, number, number] {
  const x = Math.min(1, Math.max(0, u)) * 10, k = Math.floor(x), f = x - k;
  const a = VIRIDIS[k], b = VIRIDIS[Math.min(10, k + 1)];
  return [a[0] + f * (b[0] - a[0]), a[1] + f * (b[1] - a[1]), a[2] + f * (b[2] - a[2])];
}

/** Hue wheel: phase in (−π, π] → fully saturated colour. */
function hue(phase: number): [number, number, number] {
  const h = ((phase + Math.PI) / (2 * Math.PI)) * 6;
  const c = (k: number) => {
    const x = (k + h) % 6;
    return 255 * Math.max(0, Math.min(1, Math.min(x, 4 - x)));
  };
  return [c(5), c(3), c(1)];
}

const BLANK: [number, number, number] = [238, 240, 243];

/** PNG data URI of an image (row 0 at the bottom, as in the field's y axis); `blank` pixels drawn light grey. */
function png(
  img: StoredFieldImage,
  colour: (v: number) => [number, number, number],
  blank: (p: number) => boolean = () => false,
): string {
  const { nx, ny, values } = img;
  const data = new Uint8Array(3 * nx * ny);
  for (let j = 0; j < ny; j++) {
    for (let i = 0; i < nx; i++) {
      const [r, g, b] = blank(j * nx + i) ? BLANK : colour(values[j * nx + i]);
      const o = 3 * ((ny - 1 - j) * nx + i);
      data[o] = Math.round(r);
      data[o + 1] = Math.round(g);
      data[o + 2] = Math.round(b);
    }
  }
  const bytes = encode({ width: nx, height: ny, data, channels: 3, depth: 8 });
  return `data:image/png;base64,${Buffer.from(bytes).toString("base64")}`;
}

const SIZE = 300;

function panel(uri: string, markers: string, title: string): string {
  return `<figure class="field-panel"><div class="field-title">${escapeHtml(title)}</div>
<svg width="${SIZE}" height="${SIZE}" viewBox="0 0 ${SIZE} ${SIZE}" role="img" aria-label="${
    escapeHtml(title)
  }">
<image href="${uri}" width="${SIZE}" height="${SIZE}" preserveAspectRatio="none" style="image-rendering:pixelated"/>
${markers}</svg></figure>`;
}

/** SVG markers of frame k's vortices, mapped into the image's extent. */
function vortexMarkers(db: DatabaseSync, realisationId: number, k: number, img: StoredFieldImage): string {
  const f = readFrameAt(db, realisationId, k);
  if (f === undefined) return "";
  const a = frameArrays(f);
  const w = img.nx * img.dx, h = img.ny * img.dy;
  const out: string[] = [];
  for (let i = 0; i < f.n; i++) {
    const px = ((a.x[i] - img.x0) / w) * SIZE, py = SIZE - ((a.y[i] - img.y0) / h) * SIZE;
    if (!(px >= 0 && px <= SIZE && py >= 0 && py <= SIZE)) continue;
    const s = a.circulation?.[i] ?? 0;
    out.push(
      s > 0
        ? `<circle cx="${px.toFixed(1)}" cy="${
          py.toFixed(1)
        }" r="3.5" fill="#e8262b" stroke="#000" stroke-width="0.8"/>`
        : `<circle cx="${px.toFixed(1)}" cy="${
          py.toFixed(1)
        }" r="3.5" fill="none" stroke="#fff" stroke-width="1.4"/>`,
    );
  }
  return out.join("");
}

/** The "Condensate" section, or "" when no done realisation of this study revision stored field snapshots. */
export function buildFieldSnapshotSection(
  db: DatabaseSync,
  studyId: number,
  lengthUnit = "length unit",
): string {
  const first = firstRealisationWithSnapshots(db, studyId);
  if (first === null) return "";
  const images = readFieldSnapshots(db, first.realisationId);
  const ks = [...new Set(images.map((i) => i.k))].sort((a, b) => a - b);
  const shown = ks.length > 1 ? [ks[0], ks[ks.length - 1]] : ks;
  const rows = shown.map((k) => {
    const density = images.find((i) => i.k === k && i.name === "density");
    const phase = images.find((i) => i.k === k && i.name === "phase");
    const any = density ?? phase;
    if (any === undefined) return "";
    const markers = vortexMarkers(db, first.realisationId, k, any);
    const when = `t = ${formatNumber(any.t)} (frame ${k})`;
    const parts: string[] = [];
    let max = 0;
    for (const v of density?.values ?? []) max = Math.max(max, v);
    if (density) {
      const title = `density, ${when}, max ${formatNumber(max)}`;
      parts.push(panel(png(density, (v) => viridis(max > 0 ? v / max : 0)), markers, title));
    }
    if (phase) {
      // Where the density is below 5 % of its maximum the phase is noise: drawn blank.
      const low = density ? (p: number) => density.values[p] < 0.05 * max : undefined;
      parts.push(panel(png(phase, hue, low), markers, `phase, ${when}`));
    }
    return `<div class="field-row">${parts.join("\n")}</div>`;
  }).join("\n");
  const a = images[0];
  const extent = `[${formatNumber(a.x0)}, ${formatNumber(a.x0 + a.nx * a.dx)}]`;
  return `<section id="condensate">
<h2>Condensate</h2>
<p class="note">Density and phase of the first and last stored frame of realisation ${first.index} of point
${
    escapeHtml(first.pointLabel)
  } (${a.nx} × ${a.ny} pixels, each the mean over a block of grid points; x and y in
${extent} ${
    escapeHtml(lengthUnit)
  }). Density: viridis from 0 (dark) to the image's maximum (yellow). Phase: hue
wheel over (−π, π], blank where the density is below 5 % of its maximum. Markers: the vortices detected in
that frame, filled red for circulation +κ, open white for −κ.</p>
${rows}
</section>
`;
}

/** Style rules of the section (added to the page's style sheet). */
export const FIELD_SNAPSHOT_STYLE = `
.field-row { display: flex; flex-wrap: wrap; gap: 16px; margin-bottom: 16px; }
figure.field-panel { margin: 0; }
.field-title { color: var(--muted); font-size: 13px; margin-bottom: 4px; }
`;
