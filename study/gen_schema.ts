/**
 * Writes `study/schema.json`, the JSON Schema (draft 2020-12) of study files for editors, generated from the
 * zod schema over every registered engine. Run it after changing the study format or an engine's parameters:
 *
 * ```sh
 * deno task schema        # deno run --allow-read --allow-write study/gen_schema.ts
 * ```
 *
 * `study/schema_json_test.ts` fails while the committed file is stale. To use the schema in an editor with YAML
 * language support, start a study file with
 * `# yaml-language-server: $schema=<path to>/study/schema.json`.
 *
 * @example
 * ```ts
 * import { schemaJsonText } from "./gen_schema.ts";
 * const text = schemaJsonText(); // what the file must contain
 * ```
 */
import { studyJsonSchema } from "./schema.ts";

/** Location of the committed JSON Schema. */
export const SCHEMA_JSON_URL: URL = new URL("./schema.json", import.meta.url);

/** The JSON Schema text the file must contain (2-space indentation, final newline). */
export function schemaJsonText(): string {
  return JSON.stringify(studyJsonSchema(), null, 2) + "\n";
}

if (import.meta.main) {
  const text = schemaJsonText();
  await Deno.writeTextFile(SCHEMA_JSON_URL, text);
  console.log(`wrote ${SCHEMA_JSON_URL.pathname} (${text.length} bytes)`);
}
