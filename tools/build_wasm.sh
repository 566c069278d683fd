#!/bin/sh
# Compiles the AssemblyScript kernels (engines/*/asm/*.ts) to WebAssembly with the project's pinned
# assemblyscript package (npm, installed by `deno install`). Called by the launcher's install step; rebuilds
# only what is missing or older than its source. The .wasm files are build products, never committed.
set -eu
HERE=$(cd "$(dirname "$0")/.." && pwd)
DENO="$HERE/tools/deno/node_modules/.bin/deno"
ASC="$HERE/node_modules/assemblyscript/bin/asc.js"
for src in "$HERE"/engines/*/asm/*.ts; do
  [ -f "$src" ] || continue
  out="$(dirname "$src")/build/$(basename "$src" .ts).wasm"
  if [ -f "$out" ] && [ "$out" -nt "$src" ]; then continue; fi
  mkdir -p "$(dirname "$out")"
  if ! "$DENO" run --quiet --no-prompt --allow-read --allow-write --allow-env "$ASC" "$src" \
    -O3 --noAssert --runtime stub --enable simd -o "$out.tmp"; then
    rm -f "$out.tmp"
    echo "spindrift: compiling $src to WebAssembly failed" >&2
    exit 1
  fi
  mv "$out.tmp" "$out"
done
