// One Adam update of one weight tensor (see worker/src/training/kernels/adam-update.ts for the
// formula and the library's arithmetic it follows), four weights at a time with SIMD, in the wasm
// backend's memory. The outputs may not alias the inputs. No stack, no data (build.sh checks).
//
//   m' = m*b1 + g*c1,  v' = v*b2 + g*g*c2,  value' = value + step*m' / (sqrt(v')*root + eps)
//
// with c1 = 1 - b1, c2 = 1 - b2, step = -lr / (1 - b1^t), root = 1 / sqrt(1 - b2^t), all float32.

#include <wasm_simd128.h>

__attribute__((export_name("adam_update")))
void adam_update(const float *value, const float *m, const float *v, const float *g, float *out_value, float *out_m, float *out_v,
                 int count, float b1, float b2, float c1, float c2, float step, float root, float eps) {
  v128_t vb1 = wasm_f32x4_splat(b1), vb2 = wasm_f32x4_splat(b2), vc1 = wasm_f32x4_splat(c1), vc2 = wasm_f32x4_splat(c2);
  v128_t vstep = wasm_f32x4_splat(step), vroot = wasm_f32x4_splat(root), veps = wasm_f32x4_splat(eps);
  int i = 0;
  for (; i + 4 <= count; i += 4) {
    v128_t gi = wasm_v128_load(g + i);
    v128_t mi = wasm_f32x4_add(wasm_f32x4_mul(wasm_v128_load(m + i), vb1), wasm_f32x4_mul(gi, vc1));
    v128_t vi = wasm_f32x4_add(wasm_f32x4_mul(wasm_v128_load(v + i), vb2), wasm_f32x4_mul(wasm_f32x4_mul(gi, gi), vc2));
    v128_t denominator = wasm_f32x4_add(wasm_f32x4_mul(wasm_f32x4_sqrt(vi), vroot), veps);
    wasm_v128_store(out_m + i, mi);
    wasm_v128_store(out_v + i, vi);
    wasm_v128_store(out_value + i, wasm_f32x4_add(wasm_v128_load(value + i), wasm_f32x4_div(wasm_f32x4_mul(vstep, mi), denominator)));
  }
  for (; i < count; i++) {
    float gi = g[i];
    float mi = m[i] * b1 + gi * c1;
    float vi = v[i] * b2 + gi * gi * c2;
    out_m[i] = mi;
    out_v[i] = vi;
    out_value[i] = value[i] + step * mi / (__builtin_sqrtf(vi) * root + eps);
  }
}
