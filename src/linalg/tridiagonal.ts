/**
 * Eigenvalues of a real symmetric tridiagonal matrix T by bisection on Sturm counts (common
 * practice; G. H. Golub & C. F. Van Loan, Matrix Computations, §8.4, from memory).
 *
 * T has the diagonal `diag[0..n-1]` and the off-diagonal `off[0..n-2]` (T[i][i+1] = off[i]);
 * `off` may be longer, the rest is ignored. The count of eigenvalues below x is the number of
 * negative pivots of the LDLᵀ factorisation of T − xI (Sylvester's law of inertia), so each
 * bisection step costs n divisions and every eigenvalue is found to full precision whatever
 * its multiplicity.
 */

const EPS = 2.220446049250313e-16;

/** Lower and upper Gershgorin bounds: every eigenvalue lies in [lo, hi]. */
export function gershgorinBounds(diag: ArrayLike<number>, off: ArrayLike<number>): { lo: number; hi: number } {
  const n = checkSizes(diag, off);
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < n; i++) {
    const r = (i > 0 ? Math.abs(off[i - 1]) : 0) + (i < n - 1 ? Math.abs(off[i]) : 0);
    lo = Math.min(lo, diag[i] - r);
    hi = Math.max(hi, diag[i] + r);
  }
  return { lo, hi };
}

/** The number of eigenvalues of T strictly below x. */
export function sturmCount(diag: ArrayLike<number>, off: ArrayLike<number>, x: number): number {
  const n = checkSizes(diag, off);
  return countBelow(diag, off, n, x, pivotFloor(diag, off, n));
}

/**
 * The k-th smallest eigenvalue of T (k = 0 the smallest, n − 1 the largest), to about one ulp
 * of the larger end of the bracket. `lowerBound` / `upperBound` narrow the start bracket when
 * the caller knows such bounds (a rising Ritz value, say); they are used only inside the
 * Gershgorin interval.
 */
export function tridiagonalEigenvalue(
  diag: ArrayLike<number>,
  off: ArrayLike<number>,
  k: number,
  bounds: { lowerBound?: number; upperBound?: number } = {},
): number {
  const n = checkSizes(diag, off);
  if (!Number.isInteger(k) || k < 0 || k >= n) throw new RangeError(`tridiagonalEigenvalue: k must be an integer in [0, ${n - 1}], got ${k}`);
  let { lo, hi } = gershgorinBounds(diag, off);
  const { lowerBound, upperBound } = bounds;
  if (lowerBound !== undefined && lowerBound > lo && lowerBound < hi) lo = lowerBound;
  if (upperBound !== undefined && upperBound > lo && upperBound < hi) hi = upperBound;
  const floor = pivotFloor(diag, off, n);
  // invariant: at most k eigenvalues below lo, more than k at or below hi
  for (let it = 0; it < 2200; it++) {
    if (hi - lo <= 2 * EPS * Math.max(Math.abs(lo), Math.abs(hi))) break;
    const mid = 0.5 * (lo + hi);
    if (mid <= lo || mid >= hi) break; // no floating-point number strictly between
    if (countBelow(diag, off, n, mid, floor) > k) hi = mid;
    else lo = mid;
  }
  return 0.5 * (lo + hi);
}

/** The largest eigenvalue of T; `lowerBound` is a value known not to exceed it (may be omitted). */
export function tridiagonalMax(diag: ArrayLike<number>, off: ArrayLike<number>, lowerBound?: number): number {
  const n = checkSizes(diag, off);
  if (n === 0) throw new RangeError('tridiagonalMax: the matrix is empty (diag has length 0)');
  return tridiagonalEigenvalue(diag, off, n - 1, { lowerBound });
}

/** All eigenvalues of T, ascending. */
export function tridiagonalEigenvalues(diag: ArrayLike<number>, off: ArrayLike<number>): Float64Array {
  const n = checkSizes(diag, off);
  const out = new Float64Array(n);
  for (let k = 0; k < n; k++) out[k] = tridiagonalEigenvalue(diag, off, k);
  return out;
}

function checkSizes(diag: ArrayLike<number>, off: ArrayLike<number>): number {
  const n = diag.length;
  if (n > 1 && off.length < n - 1) throw new RangeError(`tridiagonal: off-diagonal has length ${off.length}, needs at least ${n - 1} for ${n} diagonal entries`);
  for (let i = 0; i < n; i++) if (!Number.isFinite(diag[i])) throw new RangeError(`tridiagonal: diag[${i}] is ${diag[i]}, every entry must be finite`);
  for (let i = 0; i < n - 1; i++) if (!Number.isFinite(off[i])) throw new RangeError(`tridiagonal: off[${i}] is ${off[i]}, every entry must be finite`);
  return n;
}

/** A zero pivot is replaced by this tiny positive number (x then counts as just below an eigenvalue). */
function pivotFloor(diag: ArrayLike<number>, off: ArrayLike<number>, n: number): number {
  let scale = 0;
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(diag[i]), i < n - 1 ? Math.abs(off[i]) : 0);
  return EPS * EPS * scale || Number.MIN_VALUE;
}

function countBelow(diag: ArrayLike<number>, off: ArrayLike<number>, n: number, x: number, floor: number): number {
  let c = 0;
  let d = 1;
  for (let i = 0; i < n; i++) {
    const b = i > 0 ? off[i - 1] : 0;
    d = diag[i] - x - (b === 0 ? 0 : (b * b) / d);
    if (d === 0) d = floor;
    if (d < 0) c++;
  }
  return c;
}
