/**
 * shimmy's typed Node/browser API: the computational core without any shell.
 *
 *   import { count, buildGallery } from 'shimmy';
 *   const { analysis } = count({ framework: buildGallery('gallery:kagome'), cells: [6, 6], boundary: 'periodic' });
 *   analysis.flexes, analysis.selfStresses, analysis.flexBasis().vectors
 */
export type { Framework, Joint, Bar, Vec2 } from './framework/types.js';
export { parseFramework, validateFramework, checkFramework } from './framework/validate.js';
export { GALLERY, galleryEntry, buildGallery, parseGallerySpec, type GalleryEntry, type GalleryParam } from './framework/gallery.js';
export { loadFramework, isGallerySpec } from './framework/load.js';
export { parseBoundary, formatBoundary, describeBoundary, type Boundary, type AxisRule, type SideRule } from './supercell/boundary.js';
export { buildSupercell, type Supercell, type SupercellBar } from './supercell/supercell.js';
export { rigidityMatrix } from './supercell/rigidity.js';
export { analyseSupercell, countsOf, type FlexAnalysis, type FlexCounts, type AnalysisOptions } from './flex/spaces.js';
export { rigidMotions, allowedRigidMotionNames } from './flex/rigid.js';
export { symbolMatrix, symbolKernel } from './spectrum/symbol.js';
export { phaseMap, type PhaseMap, type PhaseMapOptions } from './spectrum/phasemap.js';
export { zeroTopology, type ZeroTopology, type ChargedZero, type NearZero, type ZeroCurve } from './spectrum/zero-set.js';
export { almostPeriodicVerdict, type AlmostPeriodicVerdict, type AlmostPeriodicOptions } from './spectrum/almost-periodic.js';
export { edges, type EdgesRequest, type EdgesResult, type SideReport, type GridRow } from './edges/edges.js';
export { blochSolver, blochPlan } from './spectrum/bloch.js';
export { sparseSolver, sparseSpaces } from './flex/solve-sparse.js';
export { denseSolver } from './flex/solve-dense.js';
export { chooseSolver, availableSolvers } from './flex/solvers.js';
export { CancelledError, type SolverChoice, type SolverName, type SolvedSpaces, type SpaceSolver, type Progress } from './flex/solver.js';
export { classifyFlexes } from './flex/classify.js';
export { sweep, growthFit, type SweepOptions, type SweepResult } from './flex/sweep.js';
export { polynomialFit, type PolynomialFit } from './flex/growth-fit.js';
export { sideWeights, type SideWeights } from './flex/side-weights.js';
export { FLEX_CLASSES, type FlexClass, type Classification, type ClassifiedMode, type ClassifyOptions, type Anchor } from './flex/classes.js';
export { decideRank, DEFAULT_RELATIVE_TOLERANCE, AMBIGUOUS_RATIO, type Gap, type RankDecision } from './linalg/rank.js';
export type { SparseMatrix } from './linalg/sparse.js';
export type { CVec } from './linalg/complex.js';
export type { NullBasis } from './linalg/dense.js';
export { count, classify, type CountRequest, type CountResult, type ClassifyRequest, type ClassifyResult } from './analysis.js';
export { analyse, type RunRequest, type RunResult, type ClassifiedRun } from './api/run.js';
export { modeData, modeDataOfRun, modesToJson, modesToCsv } from './io/modes.js';
export { parseModesJson } from './io/modes-read.js';
export { InputError, TooLargeError, type Problem } from './errors.js';
export { CAUTION, CAUTION_SHORT } from './caution.js';
export { flexibleLattice, flexibleLatticeMatrix, principalStrains, STRAIN_INNER_PRODUCT, type FlexibleLatticeOptions, type FlexibleLatticeResult, type StrainFlex, type StrainSpace, type ZeroStrainFlex, type PrincipalStrains, type Sym2 } from './strain/flexible-lattice.js';
export { prestress, stressForm, nonTrivialFlexBasis, MAX_SELF_STRESSES, MAX_FLEXES, type PrestressResult, type PrestressVerdict } from './stress/prestress.js';
export { classifyStresses, macroscopicStress, axialForces, STRESS_CLASSES, type StressClassification, type StressMode, type StressClass, type StressClassifyOptions, type MacroStress } from './stress/classify/classify.js';
// Node only: a second thread for the large kernels (results bit for bit the same; the CLI starts one)
export { startHelperThread, type RunningHelper } from './linalg/parallel/node-thread.js';
