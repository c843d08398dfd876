/**
 * Dense linear solves for the adjoint systems of recurrent backprop.
 * @module
 */
import { fail } from "../errors/index.js";

/**
 * Solves `A x = b` in place for a dense n×n row-major `a` (overwritten) and `b` (overwritten by x),
 * by Gaussian elimination with partial pivoting (Golub & Van Loan, Matrix Computations, 4th ed., §3.4).
 * @throws {@link EbbflowError} `divergence` if A is singular to working precision.
 * @category Verification
 */
export function solveInPlace(a: Float64Array, b: Float64Array, n: number): Float64Array {
  let scale = 0;
  for (let i = 0; i < n * n; i++) scale = Math.max(scale, Math.abs(a[i] as number));
  for (let c = 0; c < n; c++) {
    let p = c;
    let best = Math.abs(a[c * n + c] as number);
    for (let r = c + 1; r < n; r++) {
      const v = Math.abs(a[r * n + c] as number);
      if (v > best) {
        best = v;
        p = r;
      }
    }
    if (best <= 1e-14 * Math.max(scale, 1e-300)) fail("divergence", "adjoint", "a non-singular linear system (a stable fixed point)", "a singular matrix", "the fixed point is not locally stable or not isolated");
    if (p !== c) {
      for (let k = 0; k < n; k++) {
        const t = a[c * n + k] as number;
        a[c * n + k] = a[p * n + k] as number;
        a[p * n + k] = t;
      }
      const t = b[c] as number;
      b[c] = b[p] as number;
      b[p] = t;
    }
    const piv = a[c * n + c] as number;
    for (let r = c + 1; r < n; r++) {
      const f = (a[r * n + c] as number) / piv;
      if (f === 0) continue;
      for (let k = c; k < n; k++) a[r * n + k] = (a[r * n + k] as number) - f * (a[c * n + k] as number);
      b[r] = (b[r] as number) - f * (b[c] as number);
    }
  }
  for (let r = n - 1; r >= 0; r--) {
    let s = b[r] as number;
    for (let k = r + 1; k < n; k++) s -= (a[r * n + k] as number) * (b[k] as number);
    b[r] = s / (a[r * n + r] as number);
  }
  return b;
}
