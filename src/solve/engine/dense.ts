/**
 * Dense linear solve for small components: Gaussian elimination with partial pivoting (Golub & Van
 * Loan, "Matrix Computations", 4th ed. 2013, Algorithm 3.4.1; from memory). In place on caller-owned
 * scratch arrays, no allocation.
 */

/**
 * Solve A x = b for an m x m matrix `a` (row-major, overwritten) and right-hand side `b`
 * (overwritten by x). Returns false when a pivot is (numerically) zero: the system is singular, e.g.
 * a closed class with gamma = 1.
 */
export function solveDense(a: Float64Array, b: Float64Array, m: number): boolean {
  for (let c = 0; c < m; c++) {
    let p = c;
    let best = Math.abs(a[c * m + c]);
    for (let r = c + 1; r < m; r++) {
      const v = Math.abs(a[r * m + c]);
      if (v > best) {
        best = v;
        p = r;
      }
    }
    if (!(best > 1e-13)) return false;
    if (p !== c) {
      for (let k = c; k < m; k++) {
        const t = a[c * m + k];
        a[c * m + k] = a[p * m + k];
        a[p * m + k] = t;
      }
      const t = b[c];
      b[c] = b[p];
      b[p] = t;
    }
    const piv = a[c * m + c];
    for (let r = c + 1; r < m; r++) {
      const f = a[r * m + c] / piv;
      if (f === 0) continue;
      for (let k = c; k < m; k++) a[r * m + k] -= f * a[c * m + k];
      b[r] -= f * b[c];
    }
  }
  for (let r = m - 1; r >= 0; r--) {
    let acc = b[r];
    for (let k = r + 1; k < m; k++) acc -= a[r * m + k] * b[k];
    b[r] = acc / a[r * m + r];
  }
  return true;
}
