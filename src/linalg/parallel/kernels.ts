/**
 * The kernels the helper thread can run, by name (helper.ts's inChunks and runBeside pass the
 * name; the thread looks the function up here). Each computes chunks of its output on shared arrays.
 */
import { residualNorms, unitColumns } from '../block.js';
import { gramRows, timesUpperRows } from '../cholesky-qr.js';
import { combineRows } from '../../flex/classify/cvec-ops.js';
import { solveColumns } from '../sparse-ldl/solve.js';
import { realWeightedGram } from '../../flex/classify/rest-split.js';
import { touchPages } from './helper.js';

export const KERNELS = {
  gramRows,
  timesUpperRows,
  unitColumns,
  residualNorms,
  combineRows,
  solveColumns,
  realWeightedGram,
  touchPages,
} as const;

export type KernelName = keyof typeof KERNELS;
