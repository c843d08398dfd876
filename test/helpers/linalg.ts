/** Small dense linear algebra for test references (Gaussian elimination with partial pivoting; Golub & Van Loan, Matrix Computations, §3.4). */

/** Solves A x = b for a square row-major A (n×n); returns x. */
export function solve(a: number[][], b: number[]): number[] {
  const n = b.length;
  const m = a.map((row, i) => [...row, b[i] as number]);
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(m[r]![c]!) > Math.abs(m[p]![c]!)) p = r;
    [m[c], m[p]] = [m[p]!, m[c]!];
    const piv = m[c]![c]!;
    if (piv === 0) throw new Error("singular matrix");
    for (let r = c + 1; r < n; r++) {
      const f = m[r]![c]! / piv;
      for (let k = c; k <= n; k++) m[r]![k] = m[r]![k]! - f * m[c]![k]!;
    }
  }
  const x = new Array<number>(n).fill(0);
  for (let r = n - 1; r >= 0; r--) {
    let s = m[r]![n]!;
    for (let k = r + 1; k < n; k++) s -= m[r]![k]! * x[k]!;
    x[r] = s / m[r]![r]!;
  }
  return x;
}

/** Row-major flat n×m array to nested rows. */
export function rows(flat: ArrayLike<number>, n: number, m: number): number[][] {
  const out: number[][] = [];
  for (let i = 0; i < n; i++) out.push(Array.from({ length: m }, (_, j) => flat[i * m + j] as number));
  return out;
}
