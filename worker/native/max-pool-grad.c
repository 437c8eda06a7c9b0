// The gradient of a 2×2, stride-2, unpadded max pool (NHWC), given the forward output y: the four
// inputs of each window are compared with the window's maximum, and the gradient goes to the first
// equal one in row-major order (the TensorFlow.js cpu backend's tie rule; the last one when none
// is equal, which an exact maximum never allows). Branch-free, four channels at a time, in the
// wasm backend's memory. No stack, no data (build.sh checks).

#include <wasm_simd128.h>

__attribute__((export_name("max_pool_grad_2x2")))
void max_pool_grad_2x2(const float *x, const float *y, const float *g, float *dx, int n, int h, int w, int c, int oh, int ow) {
  if (oh * 2 != h || ow * 2 != w) {
    // An odd last row or column lies outside every window: its gradient is zero.
    int total = n * h * w * c;
    for (int i = 0; i < total; i++) dx[i] = 0;
  }
  int row = w * c;
  int c4 = c & ~3;
  for (int b = 0; b < n; b++)
    for (int r = 0; r < oh; r++)
      for (int q = 0; q < ow; q++) {
        int base = ((b * h + 2 * r) * w + 2 * q) * c;
        int gbase = ((b * oh + r) * ow + q) * c;
        int k = 0;
        for (; k < c4; k += 4) {
          int i0 = base + k, i1 = i0 + c, i2 = i0 + row, i3 = i2 + c;
          v128_t max = wasm_v128_load(y + gbase + k), grad = wasm_v128_load(g + gbase + k);
          v128_t e0 = wasm_f32x4_eq(wasm_v128_load(x + i0), max);
          v128_t e1 = wasm_v128_andnot(wasm_f32x4_eq(wasm_v128_load(x + i1), max), e0);
          v128_t taken = wasm_v128_or(e0, e1);
          v128_t e2 = wasm_v128_andnot(wasm_f32x4_eq(wasm_v128_load(x + i2), max), taken);
          taken = wasm_v128_or(taken, e2);
          wasm_v128_store(dx + i0, wasm_v128_and(grad, e0));
          wasm_v128_store(dx + i1, wasm_v128_and(grad, e1));
          wasm_v128_store(dx + i2, wasm_v128_and(grad, e2));
          wasm_v128_store(dx + i3, wasm_v128_andnot(grad, taken));
        }
        for (; k < c; k++) {
          int i0 = base + k, i1 = i0 + c, i2 = i0 + row, i3 = i2 + c;
          float max = y[gbase + k], grad = g[gbase + k];
          int e0 = x[i0] == max, e1 = !e0 && x[i1] == max, e2 = !e0 && !e1 && x[i2] == max;
          dx[i0] = e0 ? grad : 0;
          dx[i1] = e1 ? grad : 0;
          dx[i2] = e2 ? grad : 0;
          dx[i3] = e0 || e1 || e2 ? 0 : grad;
        }
      }
}
