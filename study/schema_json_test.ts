import { deepStrictEqual } from "node:assert/strict";
import { SCHEMA_JSON_URL, schemaJsonText } from "./gen_schema.ts";

// The committed editor schema must be what the zod schema generates today (common practice for generated
// files, no source): compared as JSON values, so formatting of the file does not matter.
Deno.test("study/schema.json is up to date with the zod schema", async () => {
  let committed: unknown;
  try {
    committed = JSON.parse(await Deno.readTextFile(SCHEMA_JSON_URL));
  } catch (e) {
    throw new Error(
      `study/schema.json is missing or not JSON (${(e as Error).message}): run \`deno task schema\``,
    );
  }
  const generated = JSON.parse(schemaJsonText());
  try {
    deepStrictEqual(committed, generated);
  } catch {
    throw new Error(
      "study/schema.json is stale: the study format or an engine's parameters changed. Run `deno task schema` " +
        "(deno run --allow-read --allow-write study/gen_schema.ts) and commit the file.",
    );
  }
});
