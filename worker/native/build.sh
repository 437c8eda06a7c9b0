#!/usr/bin/env bash
# Builds filter-grad.wasm from filter-grad.c with Debian's clang and lld (apt-get install clang lld).
# The module is committed beside its source; worker/src/training/kernels/native-filter-grad.test.ts
# rebuilds it where clang is installed and checks the bytes are the same.
# Usage: worker/native/build.sh [OUT.wasm]   (default: worker/native/filter-grad.wasm)
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
out="${1:-$here/filter-grad.wasm}"
clang="${CLANG:-clang}"
flags=(--target=wasm32 -msimd128 -O3 -ffreestanding -nostdlib -fno-builtin -ffp-contract=off)
# No shadow stack: the module shares the backend's memory, whose first bytes are the backend's own.
assembly="$("$clang" "${flags[@]}" -S -o - "$here/filter-grad.c")"
if grep -q __stack_pointer <<<"$assembly"; then
  echo "build.sh: the compiled code uses the stack pointer; keep every value in locals" >&2
  exit 1
fi
"$clang" "${flags[@]}" -Wl,--no-entry -Wl,--import-memory -Wl,--strip-all -o "$out" "$here/filter-grad.c"
