// The filter gradient of a 2-D convolution (NHWC, dilation 1), compiled to WebAssembly with SIMD
// (build.sh). It reads x and dy where the TensorFlow.js wasm backend keeps them, in the backend's
// own memory, and packs nothing: each block of the result is summed in registers over every output
// position. (The backend's convolution repacks its filter operand on every call, and the filter
// gradient's filter operand is dy, new every step; see worker/src/training/ENGINE.md.)
//
//   dw[kh, kw, ci, co] = sum over n, oh, ow of x[n, oh*sh + kh - pt, ow*sw + kw - pl, ci] * dy[n, oh, ow, co]
//
// Positions whose input pixel lies in the padding add nothing and are skipped. Every sum runs over
// the positions in one fixed order, so the same inputs give the same bits every time.
//
// The module has no data, no stack and no import but the memory: every value lives in wasm locals
// (build.sh refuses a build whose code touches the stack pointer).

#include <wasm_simd128.h>

// Every helper is inlined into the one exported function, so the geometry stays in locals and
// nothing is ever spilled to memory.
#define INLINE inline __attribute__((always_inline))

typedef struct {
  int n, h, w, ci, oh, ow, co, sh, sw, pt, pl;
} geometry;

// The first output column whose input column ow*sw + kw - pl is not left of the image.
static INLINE int first_column(const geometry *g, int kw) {
  int need = g->pl - kw;
  return need <= 0 ? 0 : (need + g->sw - 1) / g->sw;
}

// One past the last output column whose input column is not right of the image.
static INLINE int end_column(const geometry *g, int kw) {
  int limit = g->w - 1 + g->pl - kw;
  if (limit < 0) return 0;
  int end = limit / g->sw + 1;
  return end < g->ow ? end : g->ow;
}

#define ROWS_BEGIN                                                                                 \
  int lo = first_column(g, kw), hi = end_column(g, kw);                                            \
  int xstep = g->sw * g->ci;                                                                       \
  for (int n = 0; n < g->n; n++)                                                                   \
    for (int oh = 0; oh < g->oh; oh++) {                                                           \
      int ih = oh * g->sh + kh - g->pt;                                                            \
      if (ih < 0 || ih >= g->h || lo >= hi) continue;                                              \
      const float *xp = x + ((n * g->h + ih) * g->w + (lo * g->sw + kw - g->pl)) * g->ci + ci;     \
      const float *dp = dy + ((n * g->oh + oh) * g->ow + lo) * g->co + co;                         \
      for (int ow = lo; ow < hi; ow++, xp += xstep, dp += g->co) {
#define ROWS_END \
  }              \
  }

#define MAC(acc, xs, d) acc = wasm_f32x4_add(acc, wasm_f32x4_mul(xs, d))

// Four input channels by eight output channels: eight vector accumulators.
static INLINE void block_ci4_co8(const float *x, const float *dy, float *tap, const geometry *g, int kh, int kw, int ci, int co) {
  v128_t a00 = wasm_f32x4_splat(0), a01 = a00, a10 = a00, a11 = a00, a20 = a00, a21 = a00, a30 = a00, a31 = a00;
  ROWS_BEGIN
  v128_t d0 = wasm_v128_load(dp), d1 = wasm_v128_load(dp + 4);
  v128_t x0 = wasm_f32x4_splat(xp[0]), x1 = wasm_f32x4_splat(xp[1]), x2 = wasm_f32x4_splat(xp[2]), x3 = wasm_f32x4_splat(xp[3]);
  MAC(a00, x0, d0); MAC(a01, x0, d1);
  MAC(a10, x1, d0); MAC(a11, x1, d1);
  MAC(a20, x2, d0); MAC(a21, x2, d1);
  MAC(a30, x3, d0); MAC(a31, x3, d1);
  ROWS_END
  float *o = tap + ci * g->co + co;
  wasm_v128_store(o, a00); wasm_v128_store(o + 4, a01); o += g->co;
  wasm_v128_store(o, a10); wasm_v128_store(o + 4, a11); o += g->co;
  wasm_v128_store(o, a20); wasm_v128_store(o + 4, a21); o += g->co;
  wasm_v128_store(o, a30); wasm_v128_store(o + 4, a31);
}

// One input channel by sixteen output channels (first layers: one or three input channels).
static INLINE void block_ci1_co16(const float *x, const float *dy, float *tap, const geometry *g, int kh, int kw, int ci, int co) {
  v128_t a0 = wasm_f32x4_splat(0), a1 = a0, a2 = a0, a3 = a0;
  ROWS_BEGIN
  v128_t xs = wasm_f32x4_splat(xp[0]);
  MAC(a0, xs, wasm_v128_load(dp)); MAC(a1, xs, wasm_v128_load(dp + 4));
  MAC(a2, xs, wasm_v128_load(dp + 8)); MAC(a3, xs, wasm_v128_load(dp + 12));
  ROWS_END
  float *o = tap + ci * g->co + co;
  wasm_v128_store(o, a0); wasm_v128_store(o + 4, a1); wasm_v128_store(o + 8, a2); wasm_v128_store(o + 12, a3);
}

// One input channel by four output channels.
static INLINE void block_ci1_co4(const float *x, const float *dy, float *tap, const geometry *g, int kh, int kw, int ci, int co) {
  v128_t a = wasm_f32x4_splat(0);
  ROWS_BEGIN
  MAC(a, wasm_f32x4_splat(xp[0]), wasm_v128_load(dp));
  ROWS_END
  wasm_v128_store(tap + ci * g->co + co, a);
}

// One input channel by one output channel (what is left when the channel counts are not multiples of four).
static INLINE void block_ci1_co1(const float *x, const float *dy, float *tap, const geometry *g, int kh, int kw, int ci, int co) {
  float a = 0;
  ROWS_BEGIN
  a += xp[0] * dp[0];
  ROWS_END
  tap[ci * g->co + co] = a;
}

// Every output channel of input channels [ci, ci + count), one at a time.
static INLINE void single_channels(const float *x, const float *dy, float *tap, const geometry *g, int kh, int kw, int ci, int count, int co_from) {
  for (int c = ci; c < ci + count; c++) {
    int co = co_from;
    for (; co + 16 <= g->co; co += 16) block_ci1_co16(x, dy, tap, g, kh, kw, c, co);
    for (; co + 4 <= g->co; co += 4) block_ci1_co4(x, dy, tap, g, kh, kw, c, co);
    for (; co < g->co; co++) block_ci1_co1(x, dy, tap, g, kh, kw, c, co);
  }
}

// x: [n, h, w, ci], dy: [n, oh, ow, co], dw: [kh, kw, ci, co], all float32 at these byte offsets
// of the memory. Writes every element of dw.
__attribute__((export_name("conv2d_filter_grad")))
void conv2d_filter_grad(const float *x, const float *dy, float *dw, int n, int h, int w, int ci, int oh, int ow, int co,
                        int kh_count, int kw_count, int sh, int sw, int pt, int pl) {
  geometry g = {n, h, w, ci, oh, ow, co, sh, sw, pt, pl};
  for (int kh = 0; kh < kh_count; kh++)
    for (int kw = 0; kw < kw_count; kw++) {
      float *tap = dw + (kh * kw_count + kw) * ci * co;
      int c = 0;
      for (; c + 4 <= ci; c += 4) {
        int o = 0;
        for (; o + 8 <= co; o += 8) block_ci4_co8(x, dy, tap, &g, kh, kw, c, o);
        if (o < co) single_channels(x, dy, tap, &g, kh, kw, c, 4, o);
      }
      single_channels(x, dy, tap, &g, kh, kw, c, ci - c, 0);
    }
}
