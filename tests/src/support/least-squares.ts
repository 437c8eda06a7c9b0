/**
 * Ordinary least squares with an intercept, in closed form: solves (XᵀX + λI)·w = Xᵀy by Gaussian
 * elimination with partial pivoting (λ = 1e-9 only keeps one-hot blocks that sum to the intercept
 * solvable). A reference to compare a trained regressor with, computed from the data alone.
 */
export function fitLeastSquares(features: Float32Array, targets: ArrayLike<number>, count: number, width: number): (row: Float32Array) => number {
  const n = width + 1;
  const a = Array.from({ length: n }, () => new Float64Array(n + 1));
  const x = new Float64Array(n);
  for (let s = 0; s < count; s++) {
    x[0] = 1;
    for (let j = 0; j < width; j++) x[j + 1] = features[s * width + j]!;
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) a[i]![j]! += x[i]! * x[j]!;
      a[i]![n]! += x[i]! * targets[s]!;
    }
  }
  for (let i = 1; i < n; i++) a[i]![i]! += 1e-9;
  for (let col = 0; col < n; col++) {
    let pivot = col;
    for (let r = col + 1; r < n; r++) if (Math.abs(a[r]![col]!) > Math.abs(a[pivot]![col]!)) pivot = r;
    [a[col], a[pivot]] = [a[pivot]!, a[col]!];
    for (let r = 0; r < n; r++) {
      if (r === col) continue;
      const f = a[r]![col]! / a[col]![col]!;
      for (let c = col; c <= n; c++) a[r]![c]! -= f * a[col]![c]!;
    }
  }
  const w = a.map((row, i) => row[n]! / row[i]!);
  return (row) => w.reduce((sum, wi, i) => sum + wi * (i === 0 ? 1 : row[i - 1]!), 0);
}
