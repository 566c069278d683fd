import { assert, assertEquals } from "../test/_assert.ts";
import { StoreError, StudyStore } from "./db.ts";
import { hostName, isWriterActive, lockPath, readWriterLock } from "./lock.ts";

function openError(path: string): StoreError {
  try {
    StudyStore.open(path).close();
  } catch (e) {
    assert(e instanceof StoreError, String(e));
    return e;
  }
  throw new Error("expected the open to be refused");
}

/** A separate process that opens the database as its writer, says "holding" and waits to be killed. */
async function holder(
  path: string,
  dir: string,
): Promise<{ child: Deno.ChildProcess; stop(): Promise<void> }> {
  const script = `${dir}/hold.ts`;
  Deno.writeTextFileSync(
    script,
    `import { StudyStore } from ${JSON.stringify(new URL("./db.ts", import.meta.url).href)};
     StudyStore.open(${JSON.stringify(path)}, { command: "run" });
     console.log("holding");
     setInterval(() => {}, 1000);`,
  );
  const child = new Deno.Command(Deno.execPath(), {
    args: ["run", "--allow-read", "--allow-write", "--allow-env", "--allow-sys=hostname", "--quiet", script],
    stdout: "piped",
    stderr: "inherit",
  }).spawn();
  const reader = child.stdout.getReader();
  const first = await reader.read();
  assertEquals(new TextDecoder().decode(first.value).trim(), "holding");
  reader.releaseLock();
  return {
    child,
    async stop() {
      child.kill("SIGKILL");
      await child.status;
      await child.stdout.cancel();
    },
  };
}

Deno.test("StudyStore.open takes the writer lock, is re-entrant within a process and releases it on close", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = `${dir}/s.sqlite`;
    const a = StudyStore.open(path, { command: "run" });
    const held = readWriterLock(path);
    assertEquals([held?.command, held?.pid, held?.host], ["run", Deno.pid, hostName()]);
    const b = StudyStore.open(path, { command: "analyse" });
    a.close();
    assert(readWriterLock(path) !== undefined, "still held by the second store");
    b.close();
    assertEquals(readWriterLock(path), undefined);
    assertEquals(
      [...Deno.readDirSync(dir)].some((e) => e.name.endsWith(".lock")),
      false,
      "lock file removed",
    );
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

// Two real processes: a writer that holds the lock until it is killed with SIGKILL (no clean-up at all), and a
// second writer, refused while the first lives and taking over the leftover lock file once it is gone.
Deno.test("the writer lock refuses a second process with host and pid, and a SIGKILLed holder leaves no stale lock", async () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = `${dir}/s.sqlite`;
    StudyStore.open(path).close();
    const h = await holder(path, dir);
    try {
      assert(isWriterActive(path));
      const e = openError(path);
      assertEquals(e.reason, "locked");
      assert(e.message.includes(`'spindrift run' on host ${hostName()}, process ${h.child.pid}`), e.message);
      assert(e.message.includes("nothing was changed"), e.message);
      assert(e.hint?.includes(`kill ${h.child.pid}`), e.hint);
    } finally {
      await h.stop();
    }
    assert(!isWriterActive(path), "the operating system dropped the lock with the process");
    assertEquals(readWriterLock(path)?.pid, h.child.pid, "its lock file is left behind");
    const store = StudyStore.open(path);
    assert(
      store.notes.some((n) => n.includes(`process ${h.child.pid}`) && n.includes("ended without")),
      store.notes.join("; "),
    );
    store.close();
    assertEquals(readWriterLock(path), undefined);
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});

Deno.test("a lock file nobody holds (written by hand, or half-written) does not block a writer", () => {
  const dir = Deno.makeTempDirSync();
  try {
    const path = `${dir}/s.sqlite`;
    Deno.writeTextFileSync(lockPath(path), "{ not json");
    const store = StudyStore.open(path);
    assertEquals(store.notes, []);
    store.close();
  } finally {
    Deno.removeSync(dir, { recursive: true });
  }
});
