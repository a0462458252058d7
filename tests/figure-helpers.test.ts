/**
 * The pure helpers behind the app's figures (src/app/export/compose.ts): superposition, the
 * rigid-motion projection (against the core's rigid fields), pixel sizes from px or mm at a dpi,
 * phase captions, file names, and the joint under a click.
 */
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { rigidMotions } from '../src/flex/rigid.js';
import { buildGallery } from '../src/framework/gallery.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { rigidityApply } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import {
  captionLines,
  checkFigureSize,
  fileStem,
  figurePixels,
  jointVelocity,
  motionName,
  nearestJoint,
  phaseCaption,
  PLAIN_RECIPE,
  projectOut,
  superpose,
  turnsText,
  wrapLines,
} from '../src/app/export/compose.js';
import { defaultState } from '../src/app/state.js';

const dot = (a: Float64Array, b: Float64Array) => a.reduce((s, x, i) => s + x * b[i], 0);

describe('superposition', () => {
  it('is the weighted sum, entry by entry, real and complex', () => {
    const a = { re: Float64Array.from([1, 2, 3, 4]), im: null };
    const b = { re: Float64Array.from([0.5, -1, 0, 2]), im: Float64Array.from([1, 0, -1, 0]) };
    const u = superpose(a, 2, b, -3);
    expect(Array.from(u.re)).toEqual([2 - 1.5, 4 + 3, 6, 8 - 6]);
    expect(Array.from(u.im!)).toEqual([-3, 0, 3, 0].map((x) => x + 0));
    const plain = superpose(a, 1, null, 0);
    expect(plain.im).toBeNull();
    expect(Array.from(plain.re)).toEqual([1, 2, 3, 4]);
  });
});

describe('rigid-motion projection', () => {
  // a free kagome sample: its flexes include the three rigid motions (translations and the rotation)
  const fw = buildGallery('gallery:kagome');
  const sc = buildSupercell(fw, [3, 3], parseBoundary('free'));
  const rigid = rigidMotions(sc).map((m) => m.field);

  it('leaves a vector orthogonal to every allowed rigid field, and keeps it a flex', () => {
    expect(rigid).toHaveLength(3);
    const run = count({ framework: fw, cells: [3, 3], boundary: 'free' });
    const basis = run.analysis.flexBasis().vectors;
    // a flex that mixes in rigid motions: the sum of the whole basis
    const re = new Float64Array(basis[0].re.length);
    for (const v of basis) for (let i = 0; i < re.length; i++) re[i] += v.re[i];
    expect(Math.max(...rigid.map((t) => Math.abs(dot(t, re))))).toBeGreaterThan(1e-3);
    const p = projectOut({ re, im: null }, rigid);
    for (const t of rigid) expect(Math.abs(dot(t, p.re))).toBeLessThan(1e-12);
    // still in ker R: the rigid motions are flexes of a free sample
    const Rp = rigidityApply(sc, p.re);
    const norm = Math.sqrt(dot(p.re, p.re));
    expect(Math.sqrt(dot(Rp, Rp)) / norm).toBeLessThan(1e-9);
  });

  it('projects real and imaginary parts separately and is idempotent', () => {
    const n = rigid[0].length;
    const re = Float64Array.from({ length: n }, (_, i) => Math.sin(i + 1));
    const im = Float64Array.from({ length: n }, (_, i) => Math.cos(3 * i));
    const p = projectOut({ re, im }, rigid);
    for (const t of rigid) {
      expect(Math.abs(dot(t, p.re))).toBeLessThan(1e-12);
      expect(Math.abs(dot(t, p.im!))).toBeLessThan(1e-12);
    }
    const q = projectOut(p, rigid);
    for (let i = 0; i < n; i++) expect(q.re[i]).toBeCloseTo(p.re[i], 14);
  });
});

describe('figure size', () => {
  it('px sizes are the pixels; dpi scales the layout (a css px is 1/96 inch, common practice)', () => {
    const a = figurePixels({ width: 1200, height: 900, unit: 'px', dpi: 192 });
    expect(a.pixels).toEqual([1200, 900]);
    expect(a.scale).toBe(2);
    expect(a.layout).toEqual([600, 450]);
  });

  it('mm sizes become mm / 25.4 × dpi pixels', () => {
    // 25.4 mm per inch (the inch's definition)
    const b = figurePixels({ width: 80, height: 60, unit: 'mm', dpi: 300 });
    expect(b.pixels).toEqual([Math.round((80 / 25.4) * 300), Math.round((60 / 25.4) * 300)]);
    expect(b.pixels).toEqual([945, 709]);
  });

  it('refuses sizes out of range, naming the field and the fix', () => {
    expect(checkFigureSize({ width: 1200, height: 900, unit: 'px', dpi: 192 })).toEqual([]);
    const p = checkFigureSize({ width: 5, height: 900, unit: 'mm', dpi: 10 });
    expect(p.map((x) => x.where)).toEqual(['figure width', 'figure dpi']);
    expect(p[0].fix).toMatch(/10 to 1000 mm/);
    expect(checkFigureSize({ width: 8000, height: 8000, unit: 'px', dpi: 96 })[0].where).toBe('figure size');
  });
});

describe('captions and names', () => {
  it('writes the phase of a frame in turns without trailing zeros', () => {
    expect(turnsText(0.25)).toBe('0.25');
    expect(turnsText(1 / 6)).toBe('0.1667');
    expect(turnsText(0)).toBe('0');
    expect(turnsText(0.99999)).toBe('0');
    expect(phaseCaption(0.25)).toBe('φ = 0.25 turns');
  });

  it('puts the caution in the caption only when asked', () => {
    const s = defaultState();
    const c = { result: null, resultState: s, view: s.view, recipe: PLAIN_RECIPE };
    expect(captionLines(c, { caption: true, caution: false, turns: 0.5 })).toEqual([expect.stringContaining('φ = 0.5 turns')]);
    expect(captionLines(c, { caption: false, caution: false, turns: 0.5 })).toEqual([]);
    const two = captionLines(c, { caption: true, caution: true, turns: null });
    expect(two).toHaveLength(2);
    expect(two[1]).toMatch(/^shimmy — /);
  });

  it('names a superposition and a projection', () => {
    expect(motionName(3, PLAIN_RECIPE)).toBe('flex 3');
    expect(motionName(3, { wa: 1, b: 5, wb: -0.5, projectRigid: true })).toBe('flex 3 − 0.5·flex 5, rigid motions removed');
  });

  it('keeps decimals in file names', () => {
    const s = defaultState();
    s.framework = { kind: 'gallery', name: 'twisted-kagome', params: { twist: 15.5 } };
    s.view.flex = 3;
    expect(fileStem(s, s.view)).toBe('twisted-kagome_twist-15.5_6x6_free_flex-3');
    s.bc = 'x=twist:0.25,bottom=pinned,top=free';
    expect(fileStem(s, s.view, { wa: 1, b: 5, wb: 0.5, projectRigid: true })).toBe('twisted-kagome_twist-15.5_6x6_x-twist-0.25_bottom-pinned_top-free_flex-3+0.5x5_no-rigid');
  });

  it('wraps caption lines at spaces', () => {
    const out = wrapLines(['aaa bbb ccc ddd eee fff ggg hhh iii jjj kkk'], 20 * 6.6, 6.6);
    expect(out.every((l) => l.length <= 20)).toBe(true);
    expect(out.join(' ')).toBe('aaa bbb ccc ddd eee fff ggg hhh iii jjj kkk');
  });
});

describe('joint readout', () => {
  it('picks the nearest joint within the radius, or none', () => {
    const pos = [0, 0, 1, 0, 0, 1];
    expect(nearestJoint(pos, 0.9, 0.1, 0.3)).toBe(1);
    expect(nearestJoint(pos, 0.5, 0.5, 0.3)).toBeNull();
  });

  it('reads the velocity of a joint and its share of the largest', () => {
    const u = { re: Float64Array.from([3, 4, 0, 1]), im: Float64Array.from([0, 0, 0, 0]) };
    const v = jointVelocity(u, 1);
    expect(v.ux).toEqual([0, 0]);
    expect(v.uy).toEqual([1, 0]);
    expect(v.norm).toBe(1);
    expect(v.relative).toBeCloseTo(0.2, 15);
  });
});
