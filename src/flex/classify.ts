/**
 * The flex classifier lives in src/flex/classify/ (start at classify/classify.ts, whose header
 * holds the definitions). This file keeps the import path of its public names.
 */
export * from './classify/classify.js';
export { DEFAULT_STRIP, DEFAULT_WINDOW, FIT_FLOOR, HEAD_WEIGHT, LINE_COVERAGE, MIN_R2, SPAN_TOLERANCE, SUPPORT_AMPLITUDE } from './classify/thresholds.js';
export { hermitianEigen } from './classify/cvec-ops.js';
export { KERNEL_INTERSECTION_MAX_COLUMNS, restrictedMatrix, SPARSE_MIN_COLUMNS } from './classify/restricted-kernel.js';
export { psdNullSpace } from './classify/null-space.js';
