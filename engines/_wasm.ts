/**
 * Loading of the WebAssembly kernels that the install step compiles from AssemblyScript
 * (`engines/*\/asm/*.ts` → `asm/build/*.wasm`, tools/build_wasm.sh): one compiled module per file, one
 * instance per caller (each thread gets its own). A missing file fails the realisation with the fix.
 */
import { EngineFailure } from "./contract.ts";

const modules = new Map<string, WebAssembly.Module>();

/** A new instance of the compiled kernel at `url`; EngineFailure("invalid-state") naming the fix if absent. */
export function instantiateKernel(url: URL, alternative: string): WebAssembly.Instance {
  let mod = modules.get(url.href);
  if (mod === undefined) {
    let bytes: Uint8Array<ArrayBuffer>;
    try {
      bytes = Deno.readFileSync(url);
    } catch {
      throw new EngineFailure(
        "invalid-state",
        `the compiled WebAssembly kernel ${url.pathname} is missing: run ./spindrift --help once (its install ` +
          `step compiles it with AssemblyScript)${alternative ? `, or ${alternative}` : ""}`,
        0,
      );
    }
    mod = new WebAssembly.Module(bytes);
    modules.set(url.href, mod);
  }
  return new WebAssembly.Instance(mod, {
    env: {
      abort() {
        throw new Error(`WebAssembly kernel ${url.pathname} aborted`);
      },
    },
  });
}
