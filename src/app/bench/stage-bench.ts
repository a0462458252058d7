/**
 * Drawing-speed benchmark of the stage (not part of the app): a large supercell with a smooth
 * synthetic velocity field (for timing only, not a flex), animated for a few seconds in the
 * drawing mode named by ?mode=mesh|graphics. Results land in window.benchResult.
 * Open /src/app/bench/stage.html?mode=mesh&cells=29 under `npm start`.
 */
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

async function main(): Promise<void> {
  const sc = buildSupercell(buildGallery('gallery:kagome'), [n, n], parseBoundary('free'));
  const geom = geometryOf(sc);
  const model = buildScene(geom);
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
  const stage = new Stage(document.getElementById('stage')!, mode);
  await stage.init();
  stage.setScene(model);
  stage.setField(fieldOf(model, { re, im }, 0.3));
  stage.update({ playing: true, speed: 1, arrows: q.get('arrows') === '1' ? 'velocity' : 'none' });
  const t0 = performance.now();
  const f0 = stage.stats().frames;
  await new Promise((r) => setTimeout(r, seconds * 1000));
  const s = stage.stats();
  (window as unknown as { benchResult: unknown }).benchResult = {
    ...s,
    meanFps: ((s.frames - f0) * 1000) / (performance.now() - t0),
  };
}
void main();
