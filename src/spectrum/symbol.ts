/**
 * The symbol Φ(z) of a periodic framework: the unit cell's rigidity matrix for Bloch phases
 * z = (z1, z2) = (exp 2πiθ1, exp 2πiθ2), θ in turns. The row of bar a→b with shift s holds
 * −p at a and +z1^s1·z2^s2·p at b. A flex of the infinite framework with
 * u(c + cell) = z^cell·u(c) is exactly a kernel vector of Φ(z).
 *
 * Φ(θ) is the rigidity matrix of the one-cell supercell twisted by θ on both axes (its wrap
 * counts are the shifts), which is how the Bloch solver uses it. SymbolAssembler writes it
 * densely, column by column, into reused buffers: the phase map and the Bloch solver evaluate
 * it at thousands of phases.
 * Like rigidityMatrix, Φ holds the bar vectors of scaledBarVectors, in units of lengthScale
 * (lengthScaleOf, the value the supercell carries), so the one-cell block equals the full R's
 * block exactly.
 */
import { resolveBars, type Framework } from '../framework/types.js';
import { cis } from '../linalg/complex.js';
import { singularValues } from '../linalg/dense.js';
import { DEFAULT_RELATIVE_TOLERANCE } from '../linalg/rank.js';
import type { SparseMatrix } from '../linalg/sparse.js';
import { scaledBarVectors } from '../supercell/rigidity.js';
import { lengthScaleOf } from '../supercell/supercell.js';

/** A dense column-major matrix: entry (r, c) at c·ld + r, rows r ≥ `rows` are zero padding. */
export interface DenseColumns {
  re: Float64Array;
  im: Float64Array;
  /** Leading dimension (rows stored per column, ≥ the matrix's rows). */
  ld: number;
}

export class SymbolAssembler {
  /** Bars of the unit cell (rows of Φ). */
  readonly rows: number;
  /** 2 per joint of the unit cell. */
  readonly cols: number;
  readonly from: Int32Array;
  readonly to: Int32Array;
  /** Divides every bar vector (see lengthScaleOf): Φ's singular values are in these units. */
  readonly lengthScale: number;
  /** The bar vector p (to − from, unwrapped) divided by lengthScale, per bar (scaledBarVectors). */
  readonly px: Float64Array;
  readonly py: Float64Array;
  /** Cell shift of each bar's `to` end. */
  readonly s1: Int32Array;
  readonly s2: Int32Array;
  /** The phase z^s of each bar's far end at the last assembled θ. */
  readonly zr: Float64Array;
  readonly zi: Float64Array;
  private buffers = new Map<number, DenseColumns>();

  constructor(fw: Framework) {
    const m = fw.bars.length;
    this.rows = m;
    this.cols = 2 * fw.joints.length;
    this.from = new Int32Array(m);
    this.to = new Int32Array(m);
    this.px = new Float64Array(m);
    this.py = new Float64Array(m);
    this.s1 = new Int32Array(m);
    this.s2 = new Int32Array(m);
    this.zr = new Float64Array(m);
    this.zi = new Float64Array(m);
    this.lengthScale = lengthScaleOf(fw);
    const p = scaledBarVectors(fw, this.lengthScale);
    resolveBars(fw).forEach((bar, r) => {
      this.from[r] = bar.from;
      this.to[r] = bar.to;
      this.s1[r] = bar.shift[0];
      this.s2[r] = bar.shift[1];
      this.px[r] = p[2 * r];
      this.py[r] = p[2 * r + 1];
    });
  }

  /**
   * Φ(θ) written column-major with leading dimension max(rows, minRows) (padding rows are zero).
   * The returned arrays are reused by the next call with the same leading dimension.
   * Phases are exp(2πi(θ1 s1 + θ2 s2)), exact at quarter turns.
   */
  assemble(theta1: number, theta2: number, minRows = 0): DenseColumns {
    const m = this.rows;
    const ld = Math.max(m, minRows);
    let buf = this.buffers.get(ld);
    if (!buf) {
      buf = { re: new Float64Array(ld * this.cols), im: new Float64Array(ld * this.cols), ld };
      this.buffers.set(ld, buf);
    }
    const { re, im } = buf;
    re.fill(0);
    im.fill(0);
    for (let r = 0; r < m; r++) {
      const a = this.from[r];
      const b = this.to[r];
      const px = this.px[r];
      const py = this.py[r];
      const [cr, ci] = cis(theta1 * this.s1[r] + theta2 * this.s2[r]);
      this.zr[r] = cr;
      this.zi[r] = ci;
      re[2 * a * ld + r] -= px;
      re[(2 * a + 1) * ld + r] -= py;
      re[2 * b * ld + r] += cr * px;
      im[2 * b * ld + r] += ci * px;
      re[(2 * b + 1) * ld + r] += cr * py;
      im[(2 * b + 1) * ld + r] += ci * py;
    }
    return buf;
  }

  /** Φ(θ) as a sparse matrix (its nonzero entries; real when every phase is real). */
  sparse(theta1: number, theta2: number): SparseMatrix {
    const { re, im, ld } = this.assemble(theta1, theta2);
    return denseToSparse(re, im, ld, this.rows, this.cols, this.zi.some((v) => v !== 0));
  }
}

/** CSR copy of the first `rows` rows of a column-major dense matrix (nonzero entries only). */
export function denseToSparse(re: Float64Array, im: Float64Array, ld: number, rows: number, cols: number, complex: boolean): SparseMatrix {
  const rowPtr = new Int32Array(rows + 1);
  const c: number[] = [];
  const vr: number[] = [];
  const vi: number[] = [];
  for (let r = 0; r < rows; r++) {
    for (let k = 0; k < cols; k++) {
      const x = re[k * ld + r];
      const y = im[k * ld + r];
      if (x !== 0 || y !== 0) {
        c.push(k);
        vr.push(x);
        vi.push(y);
      }
    }
    rowPtr[r + 1] = c.length;
  }
  return { rows, cols, rowPtr, colIdx: Int32Array.from(c), re: Float64Array.from(vr), im: complex ? Float64Array.from(vi) : null };
}

/** Φ(θ) with bar vectors in units of lengthScaleOf(fw), as rigidityMatrix. */
export function symbolMatrix(fw: Framework, theta: [number, number]): SparseMatrix {
  return new SymbolAssembler(fw).sparse(theta[0], theta[1]);
}

export interface SymbolKernel {
  theta: [number, number];
  kernel: number;
  cokernel: number;
  /** Singular values of Φ, descending, in the framework's units of length (multiplied back by lengthScale). */
  sigma: Float64Array;
}

/**
 * dim ker Φ and dim ker Φᴴ at one phase, with the rank tolerance relative to `scale`
 * (pass the supercell's σ_max to compare with a supercell count; default: Φ's own σ_max).
 */
export function symbolKernel(fw: Framework, theta: [number, number], relative = DEFAULT_RELATIVE_TOLERANCE, scale?: number): SymbolKernel {
  const assembler = new SymbolAssembler(fw);
  const phi = assembler.sparse(theta[0], theta[1]);
  const sigma = singularValues(phi).map((v) => v * assembler.lengthScale);
  const smax = scale ?? (sigma.length ? sigma[0] : 0);
  const tol = relative * smax;
  let rank = 0;
  for (const s of sigma) if (s > tol) rank++;
  return { theta, kernel: phi.cols - rank, cokernel: phi.rows - rank, sigma };
}
