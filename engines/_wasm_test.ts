import assert from "node:assert/strict";
import { EngineFailure } from "./contract.ts";
import { instantiateKernel } from "./_wasm.ts";

Deno.test("instantiateKernel: a missing compiled module fails with the file and the fix, not a stack trace", () => {
  const url = new URL("./nowhere/asm/build/missing.wasm", import.meta.url);
  assert.throws(() => instantiateKernel(url, "set numerics.fmm.nearKernel: f64"), (e: unknown) => {
    assert.ok(e instanceof EngineFailure, `EngineFailure, got ${e}`);
    assert.equal(e.kind, "invalid-state");
    assert.ok(e.message.includes("missing.wasm") && e.message.includes("./spindrift --help"), e.message);
    assert.ok(e.message.includes("nearKernel: f64"), e.message);
    return true;
  });
});
