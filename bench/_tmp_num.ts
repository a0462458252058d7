import { buildGallery } from '../src/framework/gallery.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { conjugateTranspose } from '../src/linalg/sparse.js';
import { analyseHermitian, sparseLdl } from '../src/linalg/sparse-ldl/index.js';
import { gramCsr, makeSides } from '../src/flex/sparse/sides.js';
const sc = buildSupercell(buildGallery('gallery:twisted-kagome?twist=15'), [96, 96], parseBoundary('free'));
const R = rigidityMatrix(sc);
const { stress } = makeSides(R, conjugateTranspose(R));
const K = gramCsr(stress);
const sym = analyseHermitian(K);
for (let i = 0; i < 8; i++) { const t0 = performance.now(); const F = sparseLdl(K, sym, { shift: 1e-6 }); console.log((performance.now() - t0).toFixed(0), 'ms'); }
