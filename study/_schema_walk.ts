/**
 * Reading zod 4 schemas as data, for messages and sweep checks: which keys an object allows, whether a dotted
 * parameter path exists, which keys of a value are unknown, and a short English description of what a schema
 * accepts. Works on any engine's `paramsSchema` through zod's documented `_zod.def` structure.
 */
import { z } from "zod";

type Schema = z.core.$ZodType;
type Def = z.core.$ZodTypeDef;

function defOf(schema: Schema): Def {
  return schema._zod.def;
}

/** Strips wrappers that do not change the shape of the input (optional, default, pipe input, lazy, …). */
export function unwrap(schema: Schema): Schema {
  let s = schema;
  for (let guard = 0; guard < 64; guard++) {
    const def = defOf(s);
    switch (def.type) {
      case "optional":
      case "nullable":
      case "default":
      case "prefault":
      case "catch":
      case "readonly":
      case "nonoptional":
        s = (def as z.core.$ZodOptionalDef).innerType;
        break;
      case "lazy":
        s = (def as z.core.$ZodLazyDef).getter();
        break;
      case "pipe": {
        const pipe = def as z.core.$ZodPipeDef;
        // z.preprocess(fn, schema) is pipe(transform, schema): the structure lives in `out`.
        s = defOf(pipe.in).type === "transform" ? pipe.out : pipe.in;
        break;
      }
      default:
        return s;
    }
  }
  return s;
}

function isPlainObject(v: unknown): v is Record<string, unknown> {
  return typeof v === "object" && v !== null && !Array.isArray(v);
}

/** Keys an object-like schema names, and whether other keys are allowed. `null` when not object-like. */
export function objectKeys(schema: Schema): { keys: string[]; open: boolean } | null {
  const s = unwrap(schema);
  const def = defOf(s);
  if (def.type === "object") {
    const o = def as z.core.$ZodObjectDef;
    const catchall = o.catchall;
    return { keys: Object.keys(o.shape), open: catchall !== undefined && defOf(catchall).type !== "never" };
  }
  if (def.type === "record") return { keys: [], open: true };
  if (def.type === "intersection") {
    const i = def as z.core.$ZodIntersectionDef;
    const a = objectKeys(i.left);
    const b = objectKeys(i.right);
    if (!a && !b) return null;
    return {
      keys: [...new Set([...(a?.keys ?? []), ...(b?.keys ?? [])])],
      open: (a?.open ?? false) || (b?.open ?? false),
    };
  }
  return null;
}

/** The options of a union that could describe `value` (by discriminator, then by a successful parse). */
function unionCandidates(def: z.core.$ZodUnionDef, value: unknown): readonly Schema[] {
  const options = def.options;
  const disc = (def as z.core.$ZodDiscriminatedUnionDef).discriminator;
  if (disc !== undefined && isPlainObject(value) && value[disc] !== undefined) {
    const matching = options.filter((o) => {
      const od = defOf(unwrap(o));
      if (od.type !== "object") return false;
      const d = (od as z.core.$ZodObjectDef).shape[disc];
      if (!d) return false;
      const dd = defOf(unwrap(d));
      if (dd.type === "literal") {
        return (dd as z.core.$ZodLiteralDef<z.core.util.Literal>).values.includes(value[disc] as never);
      }
      if (dd.type === "enum") {
        return Object.values((dd as z.core.$ZodEnumDef).entries).includes(value[disc] as never);
      }
      return false;
    });
    if (matching.length > 0) return matching;
  }
  const parsing = options.filter((o) => z.safeParse(o, value).success);
  return parsing.length > 0 ? parsing : options;
}

/** The schema of `value[key]` inside `schema` (choosing union options by `value`), or undefined. */
export function childSchema(schema: Schema, key: string | number, value?: unknown): Schema | undefined {
  const s = unwrap(schema);
  const def = defOf(s);
  switch (def.type) {
    case "object": {
      const o = def as z.core.$ZodObjectDef;
      if (Object.hasOwn(o.shape, key)) return o.shape[key];
      return o.catchall !== undefined && defOf(o.catchall).type !== "never" ? o.catchall : undefined;
    }
    case "record":
      return (def as z.core.$ZodRecordDef).valueType;
    case "array":
      return typeof key === "number" ? (def as z.core.$ZodArrayDef).element : undefined;
    case "tuple": {
      const t = def as z.core.$ZodTupleDef;
      if (typeof key !== "number") return undefined;
      return key < t.items.length ? t.items[key] : (t.rest ?? undefined);
    }
    case "intersection": {
      const i = def as z.core.$ZodIntersectionDef;
      return childSchema(i.left, key, value) ?? childSchema(i.right, key, value);
    }
    case "union": {
      for (const o of unionCandidates(def as z.core.$ZodUnionDef, value)) {
        const c = childSchema(o, key, value);
        if (c) return c;
      }
      return undefined;
    }
    default:
      return undefined;
  }
}

/** The schema at `path` inside `schema`, following `root` (the value being validated) to choose union options. */
export function schemaAt(schema: Schema, path: readonly PropertyKey[], root: unknown): Schema | undefined {
  let s: Schema | undefined = schema;
  let v: unknown = root;
  for (const seg of path) {
    if (!s) return undefined;
    const key = typeof seg === "number" ? seg : String(seg);
    s = childSchema(s, key, v);
    v = isPlainObject(v) || Array.isArray(v) ? (v as Record<string | number, unknown>)[key] : undefined;
  }
  return s;
}

/** A key that the schema does not allow, with the keys it does allow at that place. */
export interface UnknownKey {
  /** Path of the offending key (the key itself is the last element). */
  readonly path: readonly (string | number)[];
  readonly allowed: readonly string[];
}

/** Every key in `value` that `schema` does not name (objects that strip unknown keys count as closed). */
export function findUnknownKeys(
  schema: Schema,
  value: unknown,
  base: readonly (string | number)[] = [],
): UnknownKey[] {
  const out: UnknownKey[] = [];
  walkUnknown(schema, value, [...base], out);
  return out;
}

function walkUnknown(schema: Schema, value: unknown, path: (string | number)[], out: UnknownKey[]): void {
  const s = unwrap(schema);
  const def = defOf(s);
  if (def.type === "union") {
    const candidates = unionCandidates(def as z.core.$ZodUnionDef, value);
    let best: UnknownKey[] | null = null;
    for (const o of candidates) {
      const found: UnknownKey[] = [];
      walkUnknown(o, value, path, found);
      if (best === null || found.length < best.length) best = found;
      if (found.length === 0) break;
    }
    if (best) out.push(...best);
    return;
  }
  if (Array.isArray(value)) {
    value.forEach((item, i) => {
      const c = childSchema(s, i, value);
      if (c) walkUnknown(c, item, [...path, i], out);
    });
    return;
  }
  if (!isPlainObject(value)) return;
  const keys = objectKeys(s);
  if (!keys) return;
  for (const k of Object.keys(value)) {
    const c = childSchema(s, k, value);
    if (c) walkUnknown(c, value[k], [...path, k], out);
    else if (!keys.open) out.push({ path: [...path, k], allowed: keys.keys });
  }
}

/** Result of looking up a dotted parameter path in a schema. */
export type PathLookup =
  | { readonly ok: true; readonly schemas: readonly Schema[] }
  | {
    readonly ok: false;
    /** Index of the first segment that does not exist. */
    readonly failedAt: number;
    /** "unknown": no such key there; "not-a-map": the value before it is not a map. */
    readonly reason: "unknown" | "not-a-map";
    /** Keys allowed where the path fails. */
    readonly allowed: readonly string[];
  };

/** Whether `segments` names a field of `schema` in any union option (object fields only; no list indices). */
export function lookupPath(schema: Schema, segments: readonly string[]): PathLookup {
  let current: Schema[] = [schema];
  for (let i = 0; i < segments.length; i++) {
    const seg = segments[i];
    const next: Schema[] = [];
    const allowed = new Set<string>();
    let anyObject = false;
    const visit = (s: Schema): void => {
      const u = unwrap(s);
      const def = defOf(u);
      if (def.type === "union") {
        for (const o of (def as z.core.$ZodUnionDef).options) visit(o);
        return;
      }
      const keys = objectKeys(u);
      if (!keys) return;
      anyObject = true;
      keys.keys.forEach((k) => allowed.add(k));
      const c = childSchema(u, seg);
      if (c) next.push(c);
    };
    current.forEach(visit);
    if (next.length === 0) {
      return { ok: false, failedAt: i, reason: anyObject ? "unknown" : "not-a-map", allowed: [...allowed] };
    }
    current = next;
  }
  return { ok: true, schemas: current };
}

type Json = Record<string, unknown>;

const describeCache = new WeakMap<Schema, string>();

/**
 * What `schema` accepts, in words: "an integer ≥ 1", "a number > 0 and < 1", "one of "plane", "disk"", …
 * Built from the schema's JSON Schema (input side), so it agrees with what editors show.
 */
export function describeAllowed(schema: Schema): string {
  const cached = describeCache.get(schema);
  if (cached !== undefined) return cached;
  let text: string;
  try {
    const json = z.toJSONSchema(schema, {
      io: "input",
      unrepresentable: "any",
      target: "draft-2020-12",
    }) as Json;
    text = describeJson(json, (json.$defs ?? {}) as Record<string, Json>, 0);
  } catch {
    text = "a value of the documented form";
  }
  describeCache.set(schema, text);
  return text;
}

const SAFE = Number.MAX_SAFE_INTEGER;

function bounds(j: Json): string {
  const parts: string[] = [];
  const num = (
    k: string,
  ) => (typeof j[k] === "number" && Math.abs(j[k] as number) < SAFE ? (j[k] as number) : null);
  const gt = num("exclusiveMinimum"), ge = num("minimum"), lt = num("exclusiveMaximum"), le = num("maximum");
  if (gt !== null) parts.push(`> ${gt}`);
  else if (ge !== null) parts.push(`≥ ${ge}`);
  if (lt !== null) parts.push(`< ${lt}`);
  else if (le !== null) parts.push(`≤ ${le}`);
  if (typeof j.multipleOf === "number") parts.push(`a multiple of ${j.multipleOf}`);
  return parts.length ? " " + parts.join(" and ") : "";
}

function quote(v: unknown): string {
  return typeof v === "string" ? `"${v}"` : JSON.stringify(v);
}

function describeJson(j: Json, defs: Record<string, Json>, depth: number): string {
  if (depth > 6) return "a value";
  if (typeof j.$ref === "string") {
    const name = j.$ref.replace(/^#\/\$defs\//, "");
    const target = defs[name];
    return target ? describeJson(target, defs, depth + 1) : "a value";
  }
  const alts = (j.anyOf ?? j.oneOf) as Json[] | undefined;
  if (Array.isArray(alts)) {
    const words = [...new Set(alts.map((a) => describeJson(a, defs, depth + 1)))];
    return words.length <= 1
      ? (words[0] ?? "a value")
      : words.slice(0, -1).join(", ") + " or " + words.at(-1);
  }
  if (Array.isArray(j.enum)) {
    const values = j.enum as unknown[];
    return values.length === 1 ? quote(values[0]) : `one of ${values.map(quote).join(", ")}`;
  }
  if ("const" in j) return quote(j.const);
  switch (j.type) {
    case "integer":
      return "an integer" + bounds(j);
    case "number":
      return "a number" + bounds(j);
    case "boolean":
      return "true or false";
    case "null":
      return "null";
    case "string": {
      const parts: string[] = [];
      if (typeof j.minLength === "number" && j.minLength > 0) {
        parts.push(j.minLength === 1 ? "non-empty" : `at least ${j.minLength} characters`);
      }
      if (typeof j.maxLength === "number") parts.push(`at most ${j.maxLength} characters`);
      if (typeof j.pattern === "string") parts.push(`matching /${j.pattern}/`);
      return "a text" + (parts.length ? ` (${parts.join(", ")})` : "");
    }
    case "array": {
      const parts: string[] = [];
      if (typeof j.minItems === "number" && j.minItems > 0) {
        parts.push(`at least ${j.minItems} item${j.minItems === 1 ? "" : "s"}`);
      }
      if (typeof j.maxItems === "number") parts.push(`at most ${j.maxItems} items`);
      const items = j.items as Json | undefined;
      const of = items && Object.keys(items).length > 0 ? ` of ${describeJson(items, defs, depth + 1)}` : "";
      return "a list" + (parts.length ? ` (${parts.join(", ")})` : "") + of;
    }
    case "object": {
      const props = Object.keys((j.properties ?? {}) as Json);
      return props.length ? `a map with keys ${props.join(", ")}` : "a map";
    }
    default:
      return "a value";
  }
}
