#!/usr/bin/env bash
# Builds kernels.wasm, our WebAssembly SIMD kernels, from every .c file here, with Debian's clang
# and lld (apt-get install clang lld). The module is committed beside its sources;
# worker/src/training/kernels/native-kernels.test.ts rebuilds it where clang is installed and
# checks the bytes are the same.
# Usage: worker/native/build.sh [OUT.wasm]   (default: worker/native/kernels.wasm)
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
out="${1:-$here/kernels.wasm}"
clang="${CLANG:-clang}"
sources=("$here/adam-update.c" "$here/filter-grad.c" "$here/matmul.c" "$here/max-pool-grad.c" "$here/leading-sum.c" "$here/conv2d.c")
flags=(--target=wasm32 -msimd128 -O3 -ffreestanding -nostdlib -fno-builtin -ffp-contract=off)
# No shadow stack: the module shares the backend's memory, and the stack would sit in the backend's own bytes.
for source in "${sources[@]}"; do
  assembly="$("$clang" "${flags[@]}" -S -o - "$source")"
  if grep -q __stack_pointer <<<"$assembly"; then
    echo "build.sh: the compiled code of $(basename "$source") uses the stack pointer; keep every value in locals" >&2
    exit 1
  fi
done
"$clang" "${flags[@]}" -Wl,--no-entry -Wl,--import-memory -Wl,--strip-all -o "$out" "${sources[@]}"
chmod 644 "$out"
