/**
 * Drawing-speed benchmark of the stage (not part of the app): a kagome supercell of cells×cells
 * animated for a few seconds in the drawing mode named by ?mode=mesh|graphics. The field is
 * ?field=flex (default: the first basis flex of the periodic supercell, computed here by the
 * core) or ?field=synthetic (a smooth made-up field on the free supercell, for timing only).
 * Results land in window.benchResult.
 * Open /src/app/bench/stage.html?mode=mesh&cells=24 under `npm start`.
 */
import { count } from '../../analysis.js';
import { buildGallery } from '../../framework/gallery.js';
import { buildSupercell } from '../../supercell/supercell.js';
import { parseBoundary } from '../../supercell/boundary.js';
import { geometryOf } from '../../worker/geometry.js';
import { buildScene, fieldOf } from '../stage/scene.js';
import { Stage, type DrawMode } from '../stage/stage.js';

const q = new URLSearchParams(location.search);
const mode = (q.get('mode') ?? 'mesh') as DrawMode;
const n = Number(q.get('cells') ?? 29);
const seconds = Number(q.get('seconds') ?? 3);
const fieldKind = q.get('field') ?? 'flex';

/** A real flex: the first basis vector of ker R of the periodic kagome supercell. */
function kagomeFlex(): { geom: ReturnType<typeof geometryOf>; re: Float64Array; im: Float64Array | null } {
  const { supercell, analysis } = count({ framework: buildGallery('gallery:kagome'), cells: [n, n], boundary: 'periodic' });
  const v = analysis.flexBasis().vectors[0];
  return { geom: geometryOf(supercell), re: Float64Array.from(v.re), im: analysis.real ? null : Float64Array.from(v.im) };
}

/** A smooth made-up field on the free supercell (timing only, not a flex). */
function synthetic(): { geom: ReturnType<typeof geometryOf>; re: Float64Array; im: Float64Array } {
  const geom = geometryOf(buildSupercell(buildGallery('gallery:kagome'), [n, n], parseBoundary('free')));
  const J = geom.jointCount;
  const re = new Float64Array(2 * J);
  const im = new Float64Array(2 * J);
  for (let k = 0; k < J; k++) {
    const x = geom.positions[2 * k];
    const y = geom.positions[2 * k + 1];
    re[2 * k] = Math.sin(x * 0.7);
    re[2 * k + 1] = Math.cos(y * 0.5);
    im[2 * k] = Math.cos(x * 0.3 + y);
    im[2 * k + 1] = Math.sin(y * 0.9 - x);
  }
  return { geom, re, im };
}

async function main(): Promise<void> {
  const { geom, re, im } = fieldKind === 'synthetic' ? synthetic() : kagomeFlex();
  const model = buildScene(geom);
  const stage = new Stage(document.getElementById('stage')!, mode);
  await stage.init();
  stage.setScene(model);
  stage.setField(fieldOf(model, { re, im }, 0.3));
  stage.update({ playing: true, speed: 1, arrows: q.get('arrows') === '1' ? 'velocity' : 'none' });
  // one second to settle (shader compilation, first uploads), then count frames
  await new Promise((r) => setTimeout(r, 1000));
  const t0 = performance.now();
  const f0 = stage.stats().frames;
  await new Promise((r) => setTimeout(r, seconds * 1000));
  const s = stage.stats();
  (window as unknown as { benchResult: unknown }).benchResult = {
    ...s,
    field: fieldKind,
    width: stage.size[0],
    height: stage.size[1],
    meanFps: ((s.frames - f0) * 1000) / (performance.now() - t0),
  };
}
void main();
