/**
 * The last bytes of a stream in fixed memory: a ring buffer that keeps the final `capacity` bytes of everything
 * written to it and counts the total, so a chatty program's output costs O(capacity) memory whatever its length.
 *
 * @example
 * ```ts
 * const tail = new TailBuffer(4096);
 * tail.write(new TextEncoder().encode("line 1\nline 2\n"));
 * tail.text(); // { text: "line 1\nline 2\n", bytes: 14, truncated: false }
 * ```
 */

/** The kept text of a stream. */
export interface TailText {
  /**
   * The last bytes decoded as UTF-8 (invalid sequences replaced by U+FFFD); when truncated, from the first whole
   * line, or else from the first whole character.
   */
  readonly text: string;
  /** Total bytes written. */
  readonly bytes: number;
  /** True when earlier bytes were dropped. */
  readonly truncated: boolean;
}

/** Keeps the last `capacity` bytes written (see the module documentation). */
export class TailBuffer {
  readonly #buf: Uint8Array;
  #end = 0; // next write position
  #filled = false;
  #total = 0;

  constructor(capacity: number) {
    if (!Number.isInteger(capacity) || capacity < 1) {
      throw new RangeError(`TailBuffer: capacity must be an integer ≥ 1, got ${capacity}`);
    }
    this.#buf = new Uint8Array(capacity);
  }

  /** Appends bytes (only the last `capacity` are kept). */
  write(chunk: Uint8Array): void {
    const cap = this.#buf.length;
    this.#total += chunk.length;
    let data = chunk;
    if (data.length >= cap) {
      data = data.subarray(data.length - cap);
      this.#buf.set(data);
      this.#end = 0;
      this.#filled = true;
      return;
    }
    const first = Math.min(data.length, cap - this.#end);
    this.#buf.set(data.subarray(0, first), this.#end);
    if (first < data.length) {
      this.#buf.set(data.subarray(first), 0);
      this.#end = data.length - first;
      this.#filled = true;
    } else {
      this.#end += first;
      if (this.#end === cap) {
        this.#end = 0;
        this.#filled = true;
      }
    }
  }

  /** Total bytes written so far. */
  get bytes(): number {
    return this.#total;
  }

  /** The kept bytes, oldest first. */
  bytesKept(): Uint8Array {
    if (!this.#filled) return this.#buf.slice(0, this.#end);
    const out = new Uint8Array(this.#buf.length);
    out.set(this.#buf.subarray(this.#end));
    out.set(this.#buf.subarray(0, this.#end), this.#buf.length - this.#end);
    return out;
  }

  /** The kept bytes as text; when bytes were dropped, from the first whole line (or character). */
  text(): TailText {
    const kept = this.bytesKept();
    const truncated = this.#total > kept.length;
    let start = 0;
    if (truncated) {
      const nl = kept.indexOf(10);
      if (nl >= 0 && nl < kept.length - 1) start = nl + 1;
      else while (start < kept.length && (kept[start] & 0xc0) === 0x80) start++; // skip a cut-off character
    }
    return { text: new TextDecoder().decode(kept.subarray(start)), bytes: this.#total, truncated };
  }
}

/** The last `maxLines` lines of `text` (and at most `maxChars` characters), for messages. */
export function lastLines(text: string, maxLines: number, maxChars: number): string {
  const lines = text.replace(/\s+$/, "").split("\n");
  let out = lines.slice(-maxLines).join("\n");
  if (out.length > maxChars) out = "…" + out.slice(out.length - maxChars + 1);
  return out;
}
