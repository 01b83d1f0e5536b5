// Runs anywhere (app/ is runtime-free). Dense linear algebra for the small systems of the null fits
// (at most a handful of parameters), written out so that the numbers can be followed by hand.

/** A dense matrix as rows. */
export type Mat = number[][];

export function zeros(rows: number, cols: number): Mat {
  return Array.from({ length: rows }, () => new Array<number>(cols).fill(0));
}

/** Cholesky factor L (lower triangular, A = L·Lᵀ) of a symmetric matrix, or null if A is not positive definite. */
export function cholesky(a: Mat): Mat | null {
  const n = a.length;
  const l = zeros(n, n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = a[i][j];
      for (let k = 0; k < j; k++) s -= l[i][k] * l[j][k];
      if (i === j) {
        if (!(s > 0) || !Number.isFinite(s)) return null;
        l[i][i] = Math.sqrt(s);
      } else {
        l[i][j] = s / l[j][j];
      }
    }
  }
  return l;
}

/** Solve L·Lᵀ·x = b for x, given the Cholesky factor L. */
export function choleskySolve(l: Mat, b: readonly number[]): number[] {
  const n = l.length;
  const y = new Array<number>(n);
  for (let i = 0; i < n; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[i][k] * y[k];
    y[i] = s / l[i][i];
  }
  const x = new Array<number>(n);
  for (let i = n - 1; i >= 0; i--) {
    let s = y[i];
    for (let k = i + 1; k < n; k++) s -= l[k][i] * x[k];
    x[i] = s / l[i][i];
  }
  return x;
}

/**
 * Eigenvalues and eigenvectors of a symmetric matrix by cyclic Jacobi rotations
 * (accurate to rounding for the small matrices used here).
 * @returns values ascending; vectors[k] is the unit eigenvector of values[k].
 */
export function symEigen(a: Mat): { values: number[]; vectors: number[][] } {
  const n = a.length;
  const m = a.map((r) => r.slice());
  const v = zeros(n, n);
  for (let i = 0; i < n; i++) v[i][i] = 1;
  for (let sweep = 0; sweep < 100; sweep++) {
    let off = 0;
    for (let p = 0; p < n; p++) for (let q = p + 1; q < n; q++) off += m[p][q] * m[p][q];
    if (off === 0 || !Number.isFinite(off)) break;
    for (let p = 0; p < n; p++) {
      for (let q = p + 1; q < n; q++) {
        if (m[p][q] === 0) continue;
        const theta = (m[q][q] - m[p][p]) / (2 * m[p][q]);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1);
        const s = t * c;
        for (let k = 0; k < n; k++) {
          const mkp = m[k][p];
          const mkq = m[k][q];
          m[k][p] = c * mkp - s * mkq;
          m[k][q] = s * mkp + c * mkq;
        }
        for (let k = 0; k < n; k++) {
          const mpk = m[p][k];
          const mqk = m[q][k];
          m[p][k] = c * mpk - s * mqk;
          m[q][k] = s * mpk + c * mqk;
        }
        for (let k = 0; k < n; k++) {
          const vkp = v[k][p];
          const vkq = v[k][q];
          v[k][p] = c * vkp - s * vkq;
          v[k][q] = s * vkp + c * vkq;
        }
      }
    }
  }
  const order = Array.from({ length: n }, (_, i) => i).sort((i, j) => m[i][i] - m[j][j]);
  return {
    values: order.map((i) => m[i][i]),
    vectors: order.map((i) => v.map((row) => row[i])),
  };
}

/**
 * Covariance from an information matrix H (JᵀWJ) and the variance of one residual.
 * Directions the data do not determine (eigenvalue of the diagonally scaled H below `rcond` of the
 * largest) are flagged per parameter; the returned matrix stays finite (those directions get the
 * variance 1/(rcond·λmax)), so a design criterion can still use it.
 */
export function covariance(h: Mat, sigma2: number, rcond = 1e-10): { cov: Mat; undetermined: boolean[] } {
  const n = h.length;
  // Scale to unit diagonal so that parameters in turns, dB and √mW compare fairly.
  const d = h.map((row, i) => (row[i] > 0 && Number.isFinite(row[i]) ? 1 / Math.sqrt(row[i]) : 1));
  const hs = h.map((row, i) => row.map((x, j) => x * d[i] * d[j]));
  const { values, vectors } = symEigen(hs);
  const lmax = Math.max(values[n - 1], Number.MIN_VALUE);
  const undetermined = new Array<boolean>(n).fill(false);
  const cov = zeros(n, n);
  for (let k = 0; k < n; k++) {
    const small = !(values[k] > rcond * lmax);
    const inv = 1 / (small ? rcond * lmax : values[k]);
    const vk = vectors[k];
    if (small) for (let i = 0; i < n; i++) if (Math.abs(vk[i]) > 1e-3) undetermined[i] = true;
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) cov[i][j] += vk[i] * vk[j] * inv;
  }
  for (let i = 0; i < n; i++) {
    if (h[i][i] === 0) undetermined[i] = true;
    for (let j = 0; j < n; j++) cov[i][j] *= d[i] * d[j] * sigma2;
  }
  return { cov, undetermined };
}

/** Least-squares solution of X·β ≈ y (normal equations through Cholesky), or null when X lacks rank. */
export function linearLeastSquares(x: Mat, y: readonly number[]): number[] | null {
  const p = x[0]?.length ?? 0;
  if (x.length < p || p === 0) return null;
  const xtx = zeros(p, p);
  const xty = new Array<number>(p).fill(0);
  for (let r = 0; r < x.length; r++) {
    for (let i = 0; i < p; i++) {
      xty[i] += x[r][i] * y[r];
      for (let j = 0; j < p; j++) xtx[i][j] += x[r][i] * x[r][j];
    }
  }
  const l = cholesky(xtx);
  if (!l) return null;
  // A tiny pivot means near-dependent columns: the answer would be noise, so say "no answer".
  for (let i = 0; i < p; i++) if (l[i][i] * l[i][i] < 1e-12 * xtx[i][i]) return null;
  return choleskySolve(l, xty);
}

export function matVec(a: Mat, x: readonly number[]): number[] {
  return a.map((row) => row.reduce((s, v, j) => s + v * x[j], 0));
}

export function dot(a: readonly number[], b: readonly number[]): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}
