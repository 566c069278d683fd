/**
 * The `cluster` observable: size, centre and radial line-density profile of the main cluster over time.
 *
 * Series (one value per frame, t = frame.t):
 * - `cluster_rms_radius`, `cluster_centre_x|y` (and `_z` in 3D): the classifier's centre and R_rms (docs/methods.md §4.3).
 * - `main_count`, `object_count`: objects labelled main / all objects (2D vortices; 3D filament points).
 * - 3D only: `line_length` (total filament length), `main_line_length` (length of main-labelled loops),
 *   `loop_count`.
 * - `profile.<k>` for k = 0 … bins − 1: radial density about the frame's centre, of main-labelled objects only
 *   (evaporated and stray objects are excluded, docs/methods.md §5.2): 2D vortex count per annulus area
 *   [kw, (k+1)w), 3D filament length per shell volume, segments split at shell faces (`_profile.ts`).
 *   `profile_outside`: count (2D) or length (3D) of the main cluster beyond bins·w, so that
 *   Σ_k profile.<k> · (area or volume of bin k) + profile_outside = main count or main length exactly.
 *
 * The bin width w = binFraction · R_rms is fixed at the first frame with a finite R_rms > 0 (defaults: R_rms(0)/10
 * and 30 bins, i.e. out to 3 R_rms(0); docs/methods.md §5.2 asks for bins ≈ R_rms(0)/10). Profile series start at that
 * frame.
 *
 * Scalars: `rms_radius_initial` (R_rms of the first frame), `profile_bin_width`, `profile_bins`.
 *
 * Memory: O(objects) scratch plus the output series themselves.
 *
 * References: docs/methods.md §4.3 (centre, R_rms) and §5.2 (profiles).
 *
 * @example
 * ```ts
 * const acc = clusterObservable.create(ctx);
 * for (const frame of frames) acc.push(frame, classifier.classify(frame));
 * const { series, scalars } = acc.finish(); // series.cluster_rms_radius.v, series["profile.0"].v, …
 * ```
 */
import type { Frame } from "../contract.ts";
import { ensureI32, loopStarts } from "./_geometry.ts";
import { addSegmentToShells, annulusArea, shellVolume } from "./_profile.ts";
import type {
  Accumulator,
  Classification,
  Observable,
  ObservableContext,
  ObservableResult,
  ProfileBinning,
  SeriesOutput,
} from "./contract.ts";
import { Label } from "./labels.ts";

/** Options of {@link createClusterObservable}. */
export interface ClusterOptions {
  /** Number of profile bins (default 30). */
  readonly bins?: number;
  /** Bin width as a fraction of the first frame's R_rms (default 0.1). */
  readonly binFraction?: number;
}

/** Default radial-profile binning: 30 bins of R_rms(0)/10 (docs/methods.md §5.2), i.e. out to 3 R_rms(0). */
export const DEFAULT_PROFILE: ProfileBinning = Object.freeze({ bins: 30, binFraction: 0.1 });
const DEFAULT_BINS = DEFAULT_PROFILE.bins;
const DEFAULT_BIN_FRACTION = DEFAULT_PROFILE.binFraction;

/**
 * The cluster observable with custom profile binning. Throws a RangeError for a bin count that is not a
 * positive integer or a non-positive bin fraction.
 *
 * @example
 * ```ts
 * const fine = createClusterObservable({ bins: 60, binFraction: 0.05 });
 * ```
 */
export function createClusterObservable(options: ClusterOptions = {}): Observable {
  const bins = options.bins ?? DEFAULT_BINS;
  const binFraction = options.binFraction ?? DEFAULT_BIN_FRACTION;
  checkBinning(bins, binFraction);
  return {
    id: "cluster",
    title: "Main-cluster centre, size and radial density profile",
    needs: { fields: [], fieldsByObjects: { "filament-point": ["loop"] } },
    produces: {
      cluster_rms_radius: "RMS radius of the main cluster about its centre (length)",
      cluster_centre_x: "main-cluster centre, x (length)",
      cluster_centre_y: "main-cluster centre, y (length)",
      cluster_centre_z: "main-cluster centre, z (length; 3D only)",
      main_count: "objects labelled main (2D: vortices; 3D: filament points)",
      object_count: "all objects (2D: vortices; 3D: filament points)",
      line_length: "total filament length (length; 3D only)",
      main_line_length: "filament length of main-labelled loops (length; 3D only)",
      loop_count: "number of filament loops (3D only)",
      "profile.<k>": "radial density of the main cluster in bin k about the centre (2D: vortices per area; " +
        "3D: line length per volume)",
      profile_outside: "main-cluster count (2D) or length (3D) beyond the last profile bin",
    },
    create: (ctx) => {
      const p = ctx.profile;
      if (p === undefined) return new ClusterAccumulator(ctx, bins, binFraction);
      checkBinning(p.bins, p.binFraction);
      return new ClusterAccumulator(ctx, p.bins, p.binFraction);
    },
  };
}

function checkBinning(bins: number, binFraction: number): void {
  if (!Number.isInteger(bins) || bins < 1) {
    throw new RangeError(`profile bins must be an integer ≥ 1, got ${bins}`);
  }
  if (!(binFraction > 0) || !Number.isFinite(binFraction)) {
    throw new RangeError(`profile bin fraction must be a finite number > 0, got ${binFraction}`);
  }
}

/** The cluster observable with default binning (30 bins of R_rms(0)/10). */
export const clusterObservable: Observable = createClusterObservable();

class ClusterAccumulator implements Accumulator {
  readonly #threeD: boolean;
  readonly #bins: number;
  readonly #binFraction: number;
  readonly #t: number[] = [];
  readonly #rms: number[] = [];
  readonly #cx: number[] = [];
  readonly #cy: number[] = [];
  readonly #cz: number[] = [];
  readonly #main: number[] = [];
  readonly #objects: number[] = [];
  readonly #lineLength: number[] = [];
  readonly #mainLength: number[] = [];
  readonly #loops: number[] = [];
  readonly #profileT: number[] = [];
  readonly #profile: number[][];
  readonly #outside: number[] = [];
  #width = Number.NaN;
  #acc: Float64Array;
  #starts = new Int32Array(1);

  constructor(ctx: ObservableContext, bins: number, binFraction: number) {
    this.#threeD = ctx.capabilities.objects === "filament-point";
    this.#bins = bins;
    this.#binFraction = binFraction;
    this.#profile = Array.from({ length: bins }, () => []);
    this.#acc = new Float64Array(bins + 1);
  }

  push(frame: Frame, c: Classification): void {
    const n = frame.n;
    const labels = c.labels;
    this.#t.push(frame.t);
    this.#rms.push(c.rmsRadius);
    this.#cx.push(c.centre[0]);
    this.#cy.push(c.centre[1]);
    if (this.#threeD) this.#cz.push(c.centre[2]);
    let main = 0;
    for (let i = 0; i < n; i++) if (labels[i] === Label.Main) main++;
    this.#main.push(main);
    this.#objects.push(n);

    if (Number.isNaN(this.#width) && c.rmsRadius > 0 && Number.isFinite(c.rmsRadius)) {
      this.#width = this.#binFraction * c.rmsRadius;
    }
    const profiling = this.#width > 0 && c.centre.every(Number.isFinite);
    const acc = this.#acc;
    acc.fill(0);
    if (this.#threeD) this.#pushLines(frame, c, profiling);
    else if (profiling) this.#profile2d(frame, c);
    if (profiling) {
      const w = this.#width;
      this.#profileT.push(frame.t);
      for (let k = 0; k < this.#bins; k++) {
        this.#profile[k].push(acc[k] / (this.#threeD ? shellVolume(k, w) : annulusArea(k, w)));
      }
      this.#outside.push(acc[this.#bins]);
    }
  }

  #profile2d(frame: Frame, c: Classification): void {
    const n = frame.n;
    const x = frame.x, y = frame.y, labels = c.labels;
    const cx = c.centre[0], cy = c.centre[1];
    const inv = 1 / this.#width;
    const nb = this.#bins;
    const acc = this.#acc;
    for (let i = 0; i < n; i++) {
      if (labels[i] !== Label.Main) continue;
      const dx = x[i] - cx, dy = y[i] - cy;
      const k = Math.floor(Math.sqrt(dx * dx + dy * dy) * inv);
      acc[k < nb ? k : nb] += 1;
    }
  }

  #pushLines(frame: Frame, c: Classification, profiling: boolean): void {
    const n = frame.n;
    const loop = frame.loop;
    const z = frame.z;
    if (loop === null || z === null) {
      throw new RangeError(`frame ${frame.index} (t = ${frame.t}) lacks the 3D 'loop' or 'z' arrays`);
    }
    this.#starts = ensureI32(this.#starts, n + 1);
    const starts = this.#starts;
    const m = loopStarts(n, loop, starts);
    const x = frame.x, y = frame.y, labels = c.labels;
    const cx = c.centre[0], cy = c.centre[1], cz = c.centre[2];
    const w = this.#width, nb = this.#bins, acc = this.#acc;
    let total = 0, totalC = 0, main = 0, mainC = 0;
    for (let l = 0; l < m; l++) {
      const a = starts[l];
      const b = starts[l + 1];
      const isMain = labels[a] === Label.Main;
      for (let i = a; i < b; i++) {
        const j = i + 1 < b ? i + 1 : a;
        const dx = x[j] - x[i], dy = y[j] - y[i], dz = z[j] - z[i];
        const v = Math.sqrt(dx * dx + dy * dy + dz * dz);
        // Neumaier-compensated totals.
        let t = total + v;
        totalC += Math.abs(total) >= v ? (total - t) + v : (v - t) + total;
        total = t;
        if (!isMain) continue;
        t = main + v;
        mainC += Math.abs(main) >= v ? (main - t) + v : (v - t) + main;
        main = t;
        if (profiling) {
          addSegmentToShells(x[i] - cx, y[i] - cy, z[i] - cz, x[j] - cx, y[j] - cy, z[j] - cz, w, nb, acc);
        }
      }
    }
    this.#lineLength.push(total + totalC);
    this.#mainLength.push(main + mainC);
    this.#loops.push(m);
  }

  finish(): ObservableResult {
    const t = this.#t;
    const s = (v: number[]): SeriesOutput => ({ t, v });
    const series: Record<string, SeriesOutput> = {
      cluster_rms_radius: s(this.#rms),
      cluster_centre_x: s(this.#cx),
      cluster_centre_y: s(this.#cy),
      main_count: s(this.#main),
      object_count: s(this.#objects),
    };
    if (this.#threeD) {
      series.cluster_centre_z = s(this.#cz);
      series.line_length = s(this.#lineLength);
      series.main_line_length = s(this.#mainLength);
      series.loop_count = s(this.#loops);
    }
    const scalars: Record<string, number> = {
      rms_radius_initial: this.#rms.length > 0 ? this.#rms[0] : Number.NaN,
    };
    if (this.#width > 0) {
      for (let k = 0; k < this.#bins; k++) {
        series[`profile.${k}`] = { t: this.#profileT, v: this.#profile[k] };
      }
      series.profile_outside = { t: this.#profileT, v: this.#outside };
      scalars.profile_bin_width = this.#width;
      scalars.profile_bins = this.#bins;
    }
    return { series, scalars, events: [] };
  }
}
