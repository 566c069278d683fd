import { assert, assertEquals } from "../../test/_assert.ts";
import { commandLine, environmentWords, resolveProgram, shellQuote } from "./program_path.ts";

Deno.test("shellQuote: a POSIX shell reads every quoted word back unchanged", async () => {
  // Reference: the system's /bin/sh (POSIX.1-2017 XCU §2.2.2, single quotes), run on the quoted command line.
  const words = [
    "plain",
    "with space",
    "it's",
    "",
    "$HOME",
    'a"b',
    "*.csv",
    "back\\slash",
    "new\nline",
    "ü €",
    "-x",
  ];
  const line = `printf '%s\\0' ${commandLine(words)}`;
  const out = await new Deno.Command("/bin/sh", { args: ["-c", line], stdout: "piped" }).output();
  const got = new TextDecoder().decode(out.stdout).split("\0").slice(0, -1);
  assertEquals(got, words);
});

Deno.test("shellQuote leaves safe words bare and quotes the rest", () => {
  assertEquals(shellQuote("/usr/bin/node"), "/usr/bin/node");
  assertEquals(shellQuote("--seed=12"), "--seed=12");
  assertEquals(shellQuote("a b"), "'a b'");
  assertEquals(shellQuote("it's"), `'it'\\''s'`);
  assertEquals(shellQuote(""), "''");
  assertEquals(environmentWords({ A: "1", B: "x y" }), ["A=1", "B='x y'"]);
});

Deno.test("resolveProgram finds a name on PATH, in PATH order, and skips relative PATH entries", () => {
  const dir = Deno.makeTempDirSync();
  try {
    Deno.mkdirSync(`${dir}/a`);
    Deno.mkdirSync(`${dir}/b`);
    Deno.writeTextFileSync(`${dir}/b/tool`, "#!/bin/sh\n");
    Deno.chmodSync(`${dir}/b/tool`, 0o755);
    Deno.writeTextFileSync(`${dir}/a/tool`, "not executable\n");
    assertEquals(resolveProgram("tool", "/", `relative:${dir}/a:${dir}/b`), { path: `${dir}/b/tool` });
    Deno.chmodSync(`${dir}/a/tool`, 0o700);
    assertEquals(resolveProgram("tool", "/", `${dir}/a:${dir}/b`), { path: `${dir}/a/tool` });
    const missing = resolveProgram("no-such-tool", "/", `${dir}/a`);
    assert("problem" in missing && missing.problem.includes("is not on PATH"), JSON.stringify(missing));
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("resolveProgram resolves a path against the study folder and says why it cannot run", () => {
  const dir = Deno.makeTempDirSync();
  try {
    Deno.mkdirSync(`${dir}/bin`);
    Deno.writeTextFileSync(`${dir}/bin/sim`, "#!/bin/sh\n");
    Deno.chmodSync(`${dir}/bin/sim`, 0o755);
    Deno.writeTextFileSync(`${dir}/bin/data`, "x\n");
    Deno.chmodSync(`${dir}/bin/data`, 0o644);
    assertEquals(resolveProgram("./bin/sim", dir, ""), { path: `${dir}/bin/sim` });
    assertEquals(resolveProgram(`${dir}/bin/sim`, "/elsewhere", ""), { path: `${dir}/bin/sim` });
    const notExec = resolveProgram("bin/data", dir, "");
    assert("problem" in notExec && notExec.problem.includes("not executable"), JSON.stringify(notExec));
    const missing = resolveProgram("bin/none", dir, "");
    assert("problem" in missing && missing.problem.includes("no such file"), JSON.stringify(missing));
    const folder = resolveProgram("./bin", dir, "");
    assert("problem" in folder && folder.problem.includes("not a file"), JSON.stringify(folder));
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
