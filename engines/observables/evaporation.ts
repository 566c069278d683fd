/**
 * The `evaporation` observable: how many objects left the main cluster by evaporation (docs/methods.md §4).
 *
 * Series (t = frame.t):
 * - `evaporated_count`: cumulative number of distinct objects ever labelled evaporated, counted from the
 *   classifier's `evaporation` events (2D: vortex ids, two per dipole; 3D: loop tracks, one per loop). A
 *   recaptured object that evaporates again is not counted twice; objects that later annihilate stay counted.
 * - `recaptured_count`: cumulative number of `recapture` decisions (evaporated or stray objects that returned).
 * - `stray_count`: objects labelled stray in this frame (2D: vortices; 3D: loops).
 *
 * Scalars: `evaporated_final`, `recaptured_final` (last values of the cumulative series).
 *
 * Memory: one set of the evaporated object keys (O(evaporated objects)) plus the output series.
 *
 * @example
 * ```ts
 * const acc = evaporationObservable.create(ctx);
 * for (const frame of frames) acc.push(frame, classifier.classify(frame));
 * acc.finish().scalars.evaporated_final;
 * ```
 */
import type { Frame } from "../contract.ts";
import type {
  Accumulator,
  Classification,
  Observable,
  ObservableContext,
  ObservableResult,
} from "./contract.ts";
import { Label } from "./labels.ts";

export const evaporationObservable: Observable = {
  id: "evaporation",
  title: "Evaporated, recaptured and stray objects",
  needs: { fields: [], fieldsByObjects: { "filament-point": ["loop"] } },
  produces: {
    evaporated_count: "cumulative number of objects labelled evaporated (2D: vortices; 3D: loops)",
    recaptured_count: "cumulative number of recapture decisions (objects returned to the main cluster)",
    stray_count: "objects labelled stray in the frame (2D: vortices; 3D: loops)",
  },
  create: (ctx) => new EvaporationAccumulator(ctx),
};

class EvaporationAccumulator implements Accumulator {
  readonly #loops: boolean;
  readonly #evaporated = new Set<number>();
  #recaptured = 0;
  readonly #t: number[] = [];
  readonly #count: number[] = [];
  readonly #recapturedSeries: number[] = [];
  readonly #stray: number[] = [];

  constructor(ctx: ObservableContext) {
    this.#loops = ctx.capabilities.objects === "filament-point";
  }

  push(frame: Frame, c: Classification): void {
    for (const e of c.events) {
      if (e.kind === "evaporation") {
        if (this.#loops) this.#evaporated.add(e.data.track);
        else for (const id of e.ids) this.#evaporated.add(id);
      } else if (e.kind === "recapture") {
        this.#recaptured++;
      }
    }
    const labels = c.labels;
    let stray = 0;
    if (this.#loops && frame.loop !== null) {
      const loop = frame.loop;
      for (let i = 0; i < frame.n; i++) {
        if ((i === 0 || loop[i] !== loop[i - 1]) && labels[i] === Label.Stray) stray++;
      }
    } else {
      for (let i = 0; i < frame.n; i++) if (labels[i] === Label.Stray) stray++;
    }
    this.#t.push(frame.t);
    this.#count.push(this.#evaporated.size);
    this.#recapturedSeries.push(this.#recaptured);
    this.#stray.push(stray);
  }

  finish(): ObservableResult {
    const t = this.#t;
    const last = (v: number[]) => v.length > 0 ? v[v.length - 1] : 0;
    return {
      series: {
        evaporated_count: { t, v: this.#count },
        recaptured_count: { t, v: this.#recapturedSeries },
        stray_count: { t, v: this.#stray },
      },
      scalars: { evaporated_final: last(this.#count), recaptured_final: last(this.#recapturedSeries) },
      events: [],
    };
  }
}
