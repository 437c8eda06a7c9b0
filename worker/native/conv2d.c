// A 2-D convolution (NHWC, filter [kh, kw, ci, co], dilation 1, any stride and padding), summed in
// registers without packing the filter or building an indirection buffer (the backend's operator
// does both whenever the filter is a new tensor, i.e. after every weight update and, in the input
// gradient, for every new flipped filter). Blocks of four output columns by eight output
// channels; columns whose window reaches into the padding, and what is left of the channels, one
// column at a time. No stack, no data (build.sh checks).
//
//   y[n, oh, ow, co] = sum over kh, kw, ci of x[n, oh*sh + kh - pt, ow*sw + kw - pl, ci] * f[kh, kw, ci, co]

#include <wasm_simd128.h>

#define INLINE inline __attribute__((always_inline))
#define MAC(acc, s, d) acc = wasm_f32x4_add(acc, wasm_f32x4_mul(s, d))

// One output column, output channels [co, co + 8) (or 4, or the last one to three together),
// padding checked per tap.
static INLINE void one_column(const float *x, const float *f, float *y, int h, int w, int ci, int co_count, int kh_count, int kw_count,
                              int ih0, int iw0, int co) {
  int c8 = co + 8 <= co_count, c4 = co + 4 <= co_count;
  int rest = co_count - co;
  v128_t a0 = wasm_f32x4_splat(0), a1 = a0;
  float s0 = 0, s1 = 0, s2 = 0;
  for (int kh = 0; kh < kh_count; kh++) {
    int ih = ih0 + kh;
    if (ih < 0 || ih >= h) continue;
    for (int kw = 0; kw < kw_count; kw++) {
      int iw = iw0 + kw;
      if (iw < 0 || iw >= w) continue;
      const float *xp = x + (ih * w + iw) * ci;
      const float *fp = f + ((kh * kw_count + kw) * ci) * co_count + co;
      for (int c = 0; c < ci; c++, fp += co_count) {
        if (c8) {
          v128_t xs = wasm_f32x4_splat(xp[c]);
          MAC(a0, xs, wasm_v128_load(fp));
          MAC(a1, xs, wasm_v128_load(fp + 4));
        } else if (c4) {
          MAC(a0, wasm_f32x4_splat(xp[c]), wasm_v128_load(fp));
        } else {
          float v = xp[c];
          s0 += v * fp[0];
          if (rest > 1) s1 += v * fp[1];
          if (rest > 2) s2 += v * fp[2];
        }
      }
    }
  }
  if (c8) {
    wasm_v128_store(y + co, a0);
    wasm_v128_store(y + co + 4, a1);
  } else if (c4) {
    wasm_v128_store(y + co, a0);
  } else {
    y[co] = s0;
    if (rest > 1) y[co + 1] = s1;
    if (rest > 2) y[co + 2] = s2;
  }
}

// How many channels one_column covers from channel `co` on.
static INLINE int channel_step(int co, int co_count) { return co + 8 <= co_count ? 8 : co + 4 <= co_count ? 4 : co_count - co; }

__attribute__((export_name("conv2d_forward")))
void conv2d_forward(const float *x, const float *f, float *y, int n, int h, int w, int ci, int oh, int ow, int co,
                    int kh_count, int kw_count, int sh, int sw, int pt, int pl) {
  for (int b = 0; b < n; b++) {
    const float *xb = x + b * h * w * ci;
    for (int r = 0; r < oh; r++) {
      int ih0 = r * sh - pt;
      float *yrow = y + ((b * oh + r) * ow) * co;
      int q = 0;
      while (q < ow) {
        int iw0 = q * sw - pl;
        // Four columns whose windows all lie inside the image's width, and eight channels at a time.
        int interior = q + 4 <= ow && iw0 >= 0 && (q + 3) * sw - pl + kw_count - 1 < w;
        if (!interior) {
          for (int o = 0; o < co; o += channel_step(o, co))
            one_column(xb, f, yrow + q * co, h, w, ci, co, kh_count, kw_count, ih0, iw0, o);
          q++;
          continue;
        }
        int o = 0;
        for (; o + 8 <= co; o += 8) {
          v128_t a00 = wasm_f32x4_splat(0), a01 = a00, a10 = a00, a11 = a00, a20 = a00, a21 = a00, a30 = a00, a31 = a00;
          for (int kh = 0; kh < kh_count; kh++) {
            int ih = ih0 + kh;
            if (ih < 0 || ih >= h) continue;
            for (int kw = 0; kw < kw_count; kw++) {
              const float *x0 = xb + (ih * w + iw0 + kw) * ci;
              const float *x1 = x0 + sw * ci, *x2 = x1 + sw * ci, *x3 = x2 + sw * ci;
              const float *fp = f + ((kh * kw_count + kw) * ci) * co + o;
              for (int c = 0; c < ci; c++, fp += co) {
                v128_t f0 = wasm_v128_load(fp), f1 = wasm_v128_load(fp + 4);
                v128_t s0 = wasm_f32x4_splat(x0[c]), s1 = wasm_f32x4_splat(x1[c]), s2 = wasm_f32x4_splat(x2[c]), s3 = wasm_f32x4_splat(x3[c]);
                MAC(a00, s0, f0); MAC(a01, s0, f1);
                MAC(a10, s1, f0); MAC(a11, s1, f1);
                MAC(a20, s2, f0); MAC(a21, s2, f1);
                MAC(a30, s3, f0); MAC(a31, s3, f1);
              }
            }
          }
          float *yp = yrow + q * co + o;
          wasm_v128_store(yp, a00); wasm_v128_store(yp + 4, a01); yp += co;
          wasm_v128_store(yp, a10); wasm_v128_store(yp + 4, a11); yp += co;
          wasm_v128_store(yp, a20); wasm_v128_store(yp + 4, a21); yp += co;
          wasm_v128_store(yp, a30); wasm_v128_store(yp + 4, a31);
        }
        // The channels left over, column by column.
        for (int j = 0; j < 4; j++)
          for (int oo = o; oo < co; oo += channel_step(oo, co))
            one_column(xb, f, yrow + (q + j) * co, h, w, ci, co, kh_count, kw_count, ih0, (q + j) * sw - pl, oo);
        q += 4;
      }
    }
  }
}
