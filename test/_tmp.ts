/**
 * Temporary files and folders for tests that are removed when the test process ends, whatever the tests did
 * (a failed assertion skips a test's own clean-up). Prefer a `try … finally` removal where a test can; use these
 * in helpers that hand a path to many tests.
 */
const made: string[] = [];
let registered = false;

function track(path: string): string {
  made.push(path);
  if (!registered) {
    registered = true;
    globalThis.addEventListener("unload", () => {
      for (const p of made) {
        try {
          Deno.removeSync(p, { recursive: true });
        } catch {
          // Already removed by its test.
        }
        for (const suffix of ["-wal", "-shm", ".lock"]) {
          try {
            Deno.removeSync(p + suffix);
          } catch {
            // Not there.
          }
        }
      }
    });
  }
  return path;
}

/** A new temporary folder, removed at the end of the test process. */
export function tempDir(prefix?: string): string {
  return track(Deno.makeTempDirSync(prefix === undefined ? {} : { prefix }));
}

/** A new empty temporary file, removed (with SQLite's -wal/-shm companions) at the end of the test process. */
export function tempFile(suffix?: string): string {
  return track(Deno.makeTempFileSync(suffix === undefined ? {} : { suffix }));
}
