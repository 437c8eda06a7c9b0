// Matrix products for dense layers, without packing an operand (the backend's product repacks its
// second operand whenever it is a tensor it has not seen, i.e. after every weight update and for
// every new gradient; see worker/src/training/ENGINE.md). float32, SIMD, in the wasm backend's
// memory; the result must not alias an operand. No stack, no data (build.sh checks).

#include <wasm_simd128.h>

#define INLINE inline __attribute__((always_inline))
#define MAC(acc, s, d) acc = wasm_f32x4_add(acc, wasm_f32x4_mul(s, d))

// c[M, N] = A · b, b row-major [K, N], A's element (i, k) at a[i*sai + k*sak]: sai = K, sak = 1 for
// a row-major A [M, K]; sai = 1, sak = M for A stored transposed as [K, M]. Each block of c is
// summed over k in registers, adding rows of b scaled by broadcast elements of A.
__attribute__((export_name("matmul_rows")))
void matmul_rows(const float *a, const float *b, float *c, int m, int k, int n, int sai, int sak) {
  int i = 0;
  for (; i + 4 <= m; i += 4) {
    const float *a0 = a + i * sai, *a1 = a0 + sai, *a2 = a1 + sai, *a3 = a2 + sai;
    int j = 0;
    for (; j + 8 <= n; j += 8) {
      v128_t c00 = wasm_f32x4_splat(0), c01 = c00, c10 = c00, c11 = c00, c20 = c00, c21 = c00, c30 = c00, c31 = c00;
      const float *bp = b + j;
      for (int p = 0; p < k; p++, bp += n) {
        v128_t b0 = wasm_v128_load(bp), b1 = wasm_v128_load(bp + 4);
        int q = p * sak;
        v128_t x0 = wasm_f32x4_splat(a0[q]), x1 = wasm_f32x4_splat(a1[q]), x2 = wasm_f32x4_splat(a2[q]), x3 = wasm_f32x4_splat(a3[q]);
        MAC(c00, x0, b0); MAC(c01, x0, b1);
        MAC(c10, x1, b0); MAC(c11, x1, b1);
        MAC(c20, x2, b0); MAC(c21, x2, b1);
        MAC(c30, x3, b0); MAC(c31, x3, b1);
      }
      float *o = c + i * n + j;
      wasm_v128_store(o, c00); wasm_v128_store(o + 4, c01); o += n;
      wasm_v128_store(o, c10); wasm_v128_store(o + 4, c11); o += n;
      wasm_v128_store(o, c20); wasm_v128_store(o + 4, c21); o += n;
      wasm_v128_store(o, c30); wasm_v128_store(o + 4, c31);
    }
    for (; j < n; j++)
      for (int r = 0; r < 4; r++) {
        const float *ar = a + (i + r) * sai;
        float s = 0;
        for (int p = 0; p < k; p++) s += ar[p * sak] * b[p * n + j];
        c[(i + r) * n + j] = s;
      }
  }
  for (; i < m; i++) {
    const float *ar = a + i * sai;
    int j = 0;
    for (; j + 4 <= n; j += 4) {
      v128_t s = wasm_f32x4_splat(0);
      for (int p = 0; p < k; p++) MAC(s, wasm_f32x4_splat(ar[p * sak]), wasm_v128_load(b + p * n + j));
      wasm_v128_store(c + i * n + j, s);
    }
    for (; j < n; j++) {
      float s = 0;
      for (int p = 0; p < k; p++) s += ar[p * sak] * b[p * n + j];
      c[i * n + j] = s;
    }
  }
}

static INLINE float horizontal_sum(v128_t v) {
  return (wasm_f32x4_extract_lane(v, 0) + wasm_f32x4_extract_lane(v, 1)) + (wasm_f32x4_extract_lane(v, 2) + wasm_f32x4_extract_lane(v, 3));
}

// One dot product over k of two contiguous rows.
static INLINE float dot(const float *x, const float *y, int k) {
  v128_t s = wasm_f32x4_splat(0);
  int p = 0;
  for (; p + 4 <= k; p += 4) MAC(s, wasm_v128_load(x + p), wasm_v128_load(y + p));
  float t = horizontal_sum(s);
  for (; p < k; p++) t += x[p] * y[p];
  return t;
}

// c[M, N] = a · bᵀ, a row-major [M, K], b stored [N, K]: each element a dot product of two
// contiguous rows, blocks of two rows of a by four rows of b summed in registers.
__attribute__((export_name("matmul_dots")))
void matmul_dots(const float *a, const float *b, float *c, int m, int k, int n) {
  int k4 = k & ~3;
  int i = 0;
  for (; i + 2 <= m; i += 2) {
    const float *a0 = a + i * k, *a1 = a0 + k;
    int j = 0;
    for (; j + 4 <= n; j += 4) {
      const float *b0 = b + j * k, *b1 = b0 + k, *b2 = b1 + k, *b3 = b2 + k;
      v128_t s00 = wasm_f32x4_splat(0), s01 = s00, s02 = s00, s03 = s00, s10 = s00, s11 = s00, s12 = s00, s13 = s00;
      for (int p = 0; p < k4; p += 4) {
        v128_t x0 = wasm_v128_load(a0 + p), x1 = wasm_v128_load(a1 + p);
        v128_t y0 = wasm_v128_load(b0 + p), y1 = wasm_v128_load(b1 + p), y2 = wasm_v128_load(b2 + p), y3 = wasm_v128_load(b3 + p);
        MAC(s00, x0, y0); MAC(s01, x0, y1); MAC(s02, x0, y2); MAC(s03, x0, y3);
        MAC(s10, x1, y0); MAC(s11, x1, y1); MAC(s12, x1, y2); MAC(s13, x1, y3);
      }
      float t[8] = {horizontal_sum(s00), horizontal_sum(s01), horizontal_sum(s02), horizontal_sum(s03),
                    horizontal_sum(s10), horizontal_sum(s11), horizontal_sum(s12), horizontal_sum(s13)};
      for (int p = k4; p < k; p++) {
        t[0] += a0[p] * b0[p]; t[1] += a0[p] * b1[p]; t[2] += a0[p] * b2[p]; t[3] += a0[p] * b3[p];
        t[4] += a1[p] * b0[p]; t[5] += a1[p] * b1[p]; t[6] += a1[p] * b2[p]; t[7] += a1[p] * b3[p];
      }
      float *o = c + i * n + j;
      o[0] = t[0]; o[1] = t[1]; o[2] = t[2]; o[3] = t[3];
      o[n] = t[4]; o[n + 1] = t[5]; o[n + 2] = t[6]; o[n + 3] = t[7];
    }
    for (; j < n; j++) {
      c[i * n + j] = dot(a0, b + j * k, k);
      c[(i + 1) * n + j] = dot(a1, b + j * k, k);
    }
  }
  for (; i < m; i++)
    for (int j = 0; j < n; j++) c[i * n + j] = dot(a + i * k, b + j * k, k);
}
