// The sum of a float32 matrix [rows, cols] over its rows (a Sum over a tensor's leading axes, as
// every bias gradient is: dy summed over batch, height and width). Accumulated in float64, two
// lanes at a time, into `acc` (cols doubles of scratch), and rounded once into `out`. Reads the
// matrix once, in memory order. No stack, no data (build.sh checks).

#include <wasm_simd128.h>

__attribute__((export_name("leading_sum")))
void leading_sum(const float *x, float *out, double *acc, int rows, int cols) {
  for (int j = 0; j < cols; j++) acc[j] = 0;
  int c4 = cols & ~3;
  for (int r = 0; r < rows; r++) {
    const float *row = x + r * cols;
    int j = 0;
    for (; j < c4; j += 4) {
      v128_t v = wasm_v128_load(row + j);
      wasm_v128_store(acc + j, wasm_f64x2_add(wasm_v128_load(acc + j), wasm_f64x2_promote_low_f32x4(v)));
      wasm_v128_store(acc + j + 2, wasm_f64x2_add(wasm_v128_load(acc + j + 2), wasm_f64x2_promote_low_f32x4(wasm_i32x4_shuffle(v, v, 2, 3, 0, 1))));
    }
    for (; j < cols; j++) acc[j] += row[j];
  }
  for (int j = 0; j < cols; j++) out[j] = (float)acc[j];
}
