/**
 * Reference numbers of docs/methods.md: every [n] its text cites (and every [n] of docs/check-values.md, which
 * uses the same numbers) has an entry "- [n] …" in its §9, and every entry there is cited at least once. Where
 * the words just before a citation name an author of the list ("Schwarz [27, 28]", "Box–Muller transform
 * [52]"), one of the cited entries must carry that name, so a list renumbered under the text is caught even when
 * the numbers still exist. Bracketed citations by name ("[Stein 1945]") must appear in the "Cited by name"
 * paragraph. A consistency check of our own documents: common practice, no source.
 */
import { deepStrictEqual, ok } from "node:assert/strict";

const METHODS = new URL("../docs/methods.md", import.meta.url);
const CHECK_VALUES = new URL("../docs/check-values.md", import.meta.url);
const REFERENCES_HEADING = "## 9. References";

/** A numeric citation: the numbers it cites and the words just before it. */
interface Citation {
  numbers: number[];
  text: string;
  before: string;
}

interface ReferenceList {
  entries: Map<number, string>;
  order: number[];
  citedByName: string;
  /** Entries written as a Markdown numbered list ("27. …"), whose numbers renderers and `deno fmt` rewrite. */
  numberedListItems: number;
}

/** Numeric citations in Markdown prose: [9], [27, 28], [7–9], [44,\n45]. HTML comments are skipped. */
function numericCitations(markdown: string): Citation[] {
  const prose = markdown.replace(/<!--[\s\S]*?-->/g, " ").replace(/\s+/g, " ");
  const out: Citation[] = [];
  const re = /\[(\d+(?:\s*[–-]\s*\d+)?(?:\s*,\s*\d+(?:\s*[–-]\s*\d+)?)*)\]/g;
  let previousEnd = 0;
  for (const m of prose.matchAll(re)) {
    const numbers: number[] = [];
    for (const part of m[1].split(",")) {
      const [a, b] = part.split(/[–-]/).map((s) => Number(s.trim()));
      if (b === undefined) numbers.push(a);
      else for (let n = a; n <= b; n++) numbers.push(n);
    }
    const words = prose.slice(previousEnd, m.index).trim().split(" ");
    out.push({ numbers, text: m[0], before: words.slice(-5).join(" ") });
    previousEnd = m.index! + m[0].length;
  }
  return out;
}

/**
 * Bracketed citations by name: "[Kaplan & Meier]", "[Stein 1945]", "[von Kármán & Howarth; Pope]" → the first
 * surname of each work; brackets of mathematics ("[Ei(x) − Ei(y)]") are not citations.
 */
function namedCitations(markdown: string): string[] {
  const prose = markdown.replace(/\s+/g, " ");
  const names: string[] = [];
  for (const m of prose.matchAll(/\[((?:von )?\p{Lu}\p{Ll}+[\p{L}\s&,;.'’-]*(?:\s\d{4})?)\]/gu)) {
    for (const part of m[1].split(";")) {
      const first = part.trim().replace(/^von /, "").match(/^\p{Lu}[\p{L}'’-]+/u);
      if (first) names.push(first[0]);
    }
  }
  return names;
}

/** The "- [n] …" entries of the references section (continuation lines joined) and the by-name paragraph. */
function referenceList(section: string): ReferenceList {
  const entries = new Map<number, string>();
  const order: number[] = [];
  let current: number | null = null;
  let citedByName = "";
  let inByName = false;
  let numberedListItems = 0;
  for (const line of section.split("\n")) {
    const item = line.match(/^- \[(\d+)\] (.*)$/) ?? line.match(/^(\d+)\. (.*)$/);
    if (item) {
      if (!line.startsWith("- ")) numberedListItems++;
      current = Number(item[1]);
      ok(!entries.has(current), `§9 lists [${current}] twice`);
      entries.set(current, item[2]);
      order.push(current);
      inByName = false;
    } else if (line.startsWith("Cited by name:")) {
      current = null;
      inByName = true;
      citedByName = line;
    } else if (line.trim() === "") {
      current = null;
      inByName = false;
    } else if (current !== null) {
      entries.set(current, `${entries.get(current)} ${line.trim()}`);
    } else if (inByName) {
      citedByName += ` ${line.trim()}`;
    }
  }
  return { entries, order, citedByName, numberedListItems };
}

/** Authors' surnames of an entry: the leading "A.B. Name" items of each work ("; " separates works). */
function surnames(entry: string): Set<string> {
  const names = new Set<string>();
  const author = /^(?:\p{Lu}(?:-\p{Lu})?\.\s?)+(\p{Lu}[\p{L}'’-]+)(?: et al\.)?$/u;
  for (const work of entry.split("; ")) {
    for (const token of work.split(", ")) {
      const m = token.trim().match(author);
      if (!m) break;
      names.add(m[1]);
    }
  }
  return names;
}

/** Words of the text before a citation, possessives and dashes stripped: "Box–Muller" → Box, Muller. */
function candidateNames(before: string): string[] {
  return before.split(/[\s–/&()]+/).map((w) => w.replace(/['’]s$/, "").replace(/[^\p{L}'’-]/gu, ""))
    .filter((w) => /^\p{Lu}\p{Ll}/u.test(w));
}

/** Every problem of a document's citations against the reference list, as readable lines. */
function citationProblems(
  file: string,
  markdown: string,
  list: ReferenceList,
): string[] {
  const problems: string[] = [];
  const byEntry = new Map([...list.entries].map(([n, e]) => [n, surnames(e)]));
  const allSurnames = new Set([...byEntry.values()].flatMap((s) => [...s]));
  for (const c of numericCitations(markdown)) {
    for (const n of c.numbers) {
      if (!list.entries.has(n)) {
        problems.push(`${file}: "${c.before} ${c.text}" cites [${n}], which §9 does not list`);
      }
    }
    for (const name of candidateNames(c.before)) {
      if (!allSurnames.has(name)) continue;
      if (!c.numbers.some((n) => byEntry.get(n)?.has(name))) {
        const listed = c.numbers.map((n) => `[${n}] ${[...(byEntry.get(n) ?? [])].join(", ") || "?"}`).join(
          "; ",
        );
        problems.push(`${file}: "${c.before} ${c.text}" names ${name}, but the cited entries are ${listed}`);
      }
    }
  }
  for (const name of namedCitations(markdown)) {
    if (!list.citedByName.includes(name)) {
      problems.push(`${file}: cites [${name} …] by name, but "Cited by name" in §9 does not list ${name}`);
    }
  }
  return problems;
}

function methodsParts(markdown: string): { text: string; references: string } {
  const at = markdown.indexOf(REFERENCES_HEADING);
  ok(at >= 0, `docs/methods.md has no "${REFERENCES_HEADING}" heading`);
  return { text: markdown.slice(0, at), references: markdown.slice(at + REFERENCES_HEADING.length) };
}

Deno.test("numericCitations expands ranges and lists across line breaks and keeps the words before", () => {
  const c = numericCitations(
    "Kirchhoff's equations [7–9] and\nSchwarz [27,\n28]; not [0.85, 1.15] or [t₁, t₂].",
  );
  deepStrictEqual(c.map((x) => x.numbers), [[7, 8, 9], [27, 28]]);
  deepStrictEqual(c[1].before, "and Schwarz");
});

Deno.test("surnames reads the authors of each work of an entry and stops at the title or journal", () => {
  const names = surnames(
    "G.E.P. Box, M.E. Muller, Ann. Math. Stat. 29, 610 (1958); I-L. Chern, J. Comput. Phys.",
  );
  deepStrictEqual([...names].sort(), ["Box", "Chern", "Muller"]);
  deepStrictEqual([...surnames("O.R. Stockdale et al., Phys. Rev. Research 2, 033138 (2020)")], [
    "Stockdale",
  ]);
});

Deno.test("citationProblems catches an entry that names someone else than the text and a number with no entry", () => {
  const list = referenceList(
    "\n- [27] K.W. Schwarz, Phys. Rev. B 31, 5782 (1985).\n- [28] J. Barnes, P. Hut, Nature.\n",
  );
  ok(citationProblems("x.md", "Following Schwarz [27].", list).length === 0);
  deepStrictEqual(citationProblems("x.md", "Following Schwarz [28].", list).length, 1);
  deepStrictEqual(citationProblems("x.md", "A tree [40].", list).length, 1);
});

Deno.test("docs/methods.md: every [n] in the text and in docs/check-values.md has an entry in §9, naming the author the text names", () => {
  const methods = Deno.readTextFileSync(METHODS);
  const { text, references } = methodsParts(methods);
  const list = referenceList(references);
  ok(list.entries.size > 0, `§9 of docs/methods.md has no "- [n] …" entries`);
  const problems = [
    ...citationProblems("docs/methods.md", text, list),
    ...citationProblems("docs/check-values.md", Deno.readTextFileSync(CHECK_VALUES), list),
  ];
  ok(problems.length === 0, `${problems.length} citation problem(s):\n${problems.join("\n")}`);
});

Deno.test("docs/methods.md: §9 lists its entries in numeric order, each cited by the text at least once, by number or by name", () => {
  const { text, references } = methodsParts(Deno.readTextFileSync(METHODS));
  const list = referenceList(references);
  ok(list.entries.size > 0, `§9 of docs/methods.md has no "- [n] …" entries`);
  deepStrictEqual(
    list.numberedListItems,
    0,
    `§9 writes ${list.numberedListItems} entries as a Markdown numbered list ("27. …"): write "- [27] …", since ` +
      "Markdown renderers and deno fmt renumber numbered lists consecutively",
  );
  deepStrictEqual(list.order, [...list.order].sort((a, b) => a - b), "§9 entries are not in numeric order");
  const cited = new Set(numericCitations(text).flatMap((c) => c.numbers));
  const uncited = list.order.filter((n) => !cited.has(n));
  ok(
    uncited.length === 0,
    `§9 lists entries the text never cites: ${uncited.map((n) => `[${n}]`).join(", ")}`,
  );
  const notNamed = list.citedByName.replace(/^Cited by name:/, "").split("; ")
    .map((work) => [...surnames(work.trim())][0])
    .filter((name) => name !== undefined && !text.includes(name));
  deepStrictEqual(notNamed, [], "'Cited by name' lists works whose first author the text never names");
});
