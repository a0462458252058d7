/**
 * The shared mode-data format (src/io/modes.ts): exact JSON and CSV round trips for a real and a
 * complex (twisted) run, readable errors naming the field, and one format for CLI and app.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { inputProblems } from './helpers.js';
import { modeDataOfResult } from '../src/app/export/data.js';
import { defaultState, type AppState } from '../src/app/state.js';
import { parseArgs } from '../src/cli/args.js';
import type { CliIO } from '../src/cli/command.js';
import { exportModesCommand } from '../src/cli/export-modes.js';
import { classifyStresses } from '../src/stress/classify/classify.js';
import { classifyFlexes } from '../src/flex/classify.js';
import { analyseSupercell, countsOf } from '../src/flex/spaces.js';
import { buildGallery } from '../src/framework/gallery.js';
import { MODE_CSV_COLUMNS, MODE_DATA_FORMAT, modeDataOfRun, modesToCsv, modesToJson, type ModeData } from '../src/io/modes.js';
import { parseModesJson } from '../src/io/modes-read.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { analyse } from '../src/worker/compute.js';

interface Case {
  spec: string;
  cells: [number, number];
  bc: string;
}
const REAL: Case = { spec: 'gallery:kagome', cells: [4, 3], bc: 'free' };
const TWISTED: Case = { spec: 'gallery:twisted-kagome?twist=15', cells: [3, 5], bc: 'x=twist:0.3,y=free' };

/** The core run the CLI makes, called directly. */
function run(c: Case) {
  const supercell = buildSupercell(buildGallery(c.spec), c.cells, parseBoundary(c.bc));
  const analysis = analyseSupercell(supercell, {});
  const classification = classifyFlexes(supercell, analysis, { window: 3, strip: 2 });
  return { supercell, analysis, classification, data: modeDataOfRun({ spec: c.spec, supercell, counts: countsOf(analysis), classification }) };
}

/**
 * Paths where two values differ. Numbers are compared with Object.is, which for finite doubles
 * is bit-for-bit equality (it tells −0 from 0); typed arrays entry by entry.
 */
function differences(a: unknown, b: unknown, path = '', out: string[] = []): string[] {
  if (out.length > 10) return out;
  if (typeof a === 'number' || typeof b === 'number') {
    if (!Object.is(a, b)) out.push(`${path}: ${String(a)} vs ${String(b)}`);
  } else if (a instanceof Float64Array || b instanceof Float64Array) {
    if (!(a instanceof Float64Array && b instanceof Float64Array) || a.length !== b.length) out.push(`${path}: arrays differ in kind or length`);
    else for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) out.push(`${path}[${i}]: ${a[i]} vs ${b[i]}`);
  } else if (a !== null && b !== null && typeof a === 'object' && typeof b === 'object') {
    if (Array.isArray(a) !== Array.isArray(b)) out.push(`${path}: list vs object`);
    const keys = new Set([...Object.keys(a), ...Object.keys(b)]);
    for (const k of keys) differences((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${path}.${k}`, out);
  } else if (a !== b) out.push(`${path}: ${JSON.stringify(a)} vs ${JSON.stringify(b)}`);
  return out;
}

/** Minimal CSV reading for these files (RFC 4180 quoting; rows end with \n). */
function csvRows(text: string): string[][] {
  return text
    .trimEnd()
    .split('\n')
    .map((line) => {
      const out: string[] = [];
      let cur = '';
      let quoted = false;
      for (let i = 0; i < line.length; i++) {
        const ch = line[i];
        if (quoted) {
          if (ch === '"' && line[i + 1] === '"') (cur += '"'), i++;
          else if (ch === '"') quoted = false;
          else cur += ch;
        } else if (ch === '"') quoted = true;
        else if (ch === ',') out.push(cur), (cur = '');
        else cur += ch;
      }
      out.push(cur);
      return out;
    });
}

const real = run(REAL);
const twisted = run(TWISTED);

describe('mode-data JSON round trip', () => {
  it('a real run reads back bit for bit, with the velocities of the classifier', () => {
    const { data, supercell: sc, classification } = real;
    const text = modesToJson(data);
    const back = parseModesJson(text);
    expect(differences(back, data)).toEqual([]);
    expect(modesToJson(back)).toBe(text);
    // the numbers are the computed ones, not rounded copies
    expect(back.flexes).toHaveLength(classification.modes.length);
    back.flexes.forEach((f, i) => {
      const v = classification.modes[i].vector;
      expect(f.class).toBe(classification.modes[i].class);
      expect(differences(f.velocity.re, Float64Array.from(v.re))).toEqual([]);
      expect(f.velocity.im).toBeNull(); // real boundary: every imaginary part is 0
      expect(v.im.every((x) => x === 0)).toBe(true);
    });
    back.joints.forEach((j, k) => {
      expect(Object.is(j.x, sc.positions[2 * k]) && Object.is(j.y, sc.positions[2 * k + 1])).toBe(true);
      expect(j.site).toBe(sc.framework.joints[sc.jointSites[k]].id);
    });
    expect(back.format).toBe(MODE_DATA_FORMAT);
    expect(back.caution).toMatch(/first-order/);
    expect(back.framework).toEqual({ spec: REAL.spec, name: 'kagome', unitCell: buildGallery(REAL.spec) });
    expect([back.cells, back.boundary, back.tolerance]).toEqual([[4, 3], 'free', 1e-9]);
    // free kagome 4×3: 2(4 + 3) − 1 = 13 flexes, one per straight bond-line (Souslov, Liu & Lubensky 2009, from memory)
    expect(back.counts.flexes).toBe(13);
  });

  it('a twisted (complex) run reads back bit for bit, imaginary parts included', () => {
    const { data, classification } = twisted;
    const back = parseModesJson(modesToJson(data));
    expect(differences(back, data)).toEqual([]);
    expect(back.counts.real).toBe(false);
    expect(back.flexes.some((f) => f.velocity.im !== null)).toBe(true);
    back.flexes.forEach((f, i) => {
      const v = classification.modes[i].vector;
      expect(differences(f.velocity.re, Float64Array.from(v.re))).toEqual([]);
      if (f.velocity.im === null) expect(v.im.every((x) => x === 0)).toBe(true);
      else expect(differences(f.velocity.im, Float64Array.from(v.im))).toEqual([]);
    });
  });

  it('the file alone is enough to check each flex: R·u = 0 row by row from its bars', () => {
    // Row of bar a→b with phase φ: −p at a, +φ·p at b (the rigidity matrix; common practice).
    for (const d of [real.data, twisted.data].map((x) => parseModesJson(modesToJson(x)))) {
      for (const f of d.flexes) {
        const { re, im } = f.velocity;
        let worst = 0;
        for (const b of d.bars) {
          const [px, py] = b.vector;
          const [cr, ci] = b.phase;
          let sr = 0;
          let si = 0;
          if (b.from >= 0) {
            sr -= px * re[2 * b.from] + py * re[2 * b.from + 1];
            si -= im ? px * im[2 * b.from] + py * im[2 * b.from + 1] : 0;
          }
          if (b.to >= 0) {
            const ur = px * re[2 * b.to] + py * re[2 * b.to + 1];
            const ui = im ? px * im[2 * b.to] + py * im[2 * b.to + 1] : 0;
            sr += cr * ur - ci * ui;
            si += cr * ui + ci * ur;
          }
          worst = Math.max(worst, Math.hypot(sr, si));
        }
        expect(worst).toBeLessThan(1e-9);
      }
    }
  });

  it('keeps −0 (written as -0) and refuses to write a non-finite number', () => {
    const d = parseModesJson(modesToJson(real.data));
    d.flexes[0].velocity.re[1] = -0;
    d.joints[0].x = -0;
    const text = modesToJson(d);
    const back = parseModesJson(text);
    expect(Object.is(back.flexes[0].velocity.re[1], -0)).toBe(true);
    expect(Object.is(back.joints[0].x, -0)).toBe(true);
    expect(csvRows(modesToCsv(d))[1][6]).toBe('-0');
    d.flexes[2].velocity.re[4] = NaN;
    expect(() => modesToJson(d)).toThrow('flexes[2].velocity.re[4] is NaN');
  });
});

describe('mode-data CSV', () => {
  for (const [name, c] of [['real', real], ['twisted', twisted]] as const) {
    it(`${name}: the documented header, one row per mode and joint, the same numbers as the JSON`, () => {
      const d = c.data;
      const rows = csvRows(modesToCsv(d));
      expect(rows[0]).toEqual([...MODE_CSV_COLUMNS]);
      expect(rows[0].join(',')).toBe('mode,class,joint,cell_i,cell_j,site,x,y,ux_re,ux_im,uy_re,uy_im');
      const J = d.joints.length;
      expect(rows.length - 1).toBe(d.flexes.length * J);
      const bad: string[] = [];
      rows.slice(1).forEach((row, n) => {
        const f = d.flexes[Math.floor(n / J)];
        const k = n % J;
        const j = d.joints[k];
        const { re, im } = f.velocity;
        const want = [f.mode, f.class, k, j.cell_i, j.cell_j, j.site, j.x, j.y, re[2 * k], im ? im[2 * k] : 0, re[2 * k + 1], im ? im[2 * k + 1] : 0];
        row.forEach((cell, col) => {
          const w = want[col];
          if (typeof w === 'number' ? !Object.is(Number(cell), w) : cell !== w) bad.push(`row ${n + 1} ${MODE_CSV_COLUMNS[col]}: ${cell} vs ${w}`);
        });
      });
      expect(bad).toEqual([]);
    });
  }

  it('quotes a site id holding a comma or a quote', () => {
    const d = parseModesJson(modesToJson(real.data));
    d.joints[0].site = 'A,"1"';
    expect(modesToCsv(d).split('\n')[1]).toContain(',"A,""1""",');
    expect(csvRows(modesToCsv(d))[1][5]).toBe('A,"1"');
  });
});

describe('parseModesJson errors name the field', () => {
  const base = () => JSON.parse(modesToJson(real.data)) as Record<string, any>;
  const wheres = (v: unknown) => inputProblems(() => parseModesJson(typeof v === 'string' ? v : JSON.stringify(v))).map((p) => p.where);

  it('not JSON, another format, an old version', () => {
    const syntax = inputProblems(() => parseModesJson('{"format": "shimmy mode data", '));
    expect(syntax[0].where).toBe('(top level)');
    expect(syntax[0].what).toMatch(/not valid JSON/);
    expect(wheres({ ...base(), format: 'shimmy app state' })).toEqual(['format']);
    const old = inputProblems(() => parseModesJson(JSON.stringify({ ...base(), version: 1 })));
    expect(old.map((p) => p.where)).toEqual(['version']);
    expect(old[0].fix).toMatch(/export the run again/);
    expect(wheres([1, 2])).toEqual(['(top level)']);
  });

  it('wrong types, missing and unknown fields, all at once', () => {
    const v = base();
    v.flexes[0].velocity.re[3] = 'big';
    delete v.counts.flexes;
    v.extra = true;
    v.joints[2].x = null;
    v.classification.counts.line = -1;
    v.bars[1].wraps = [0.5, 0];
    v.framework.unitCell.lattice = [[1, 0]];
    const w = wheres(v);
    for (const x of ['flexes[0].velocity.re[3]', 'counts.flexes', 'extra', 'joints[2].x', 'classification.counts.line', 'bars[1].wraps[0]']) expect(w).toContain(x);
    expect(w.some((x) => x.startsWith('framework.unitCell.lattice'))).toBe(true);
  });

  it('fields that disagree with each other', () => {
    const short = base();
    short.joints.pop();
    expect(wheres(short)).toEqual(expect.arrayContaining(['joints']));
    const len = base();
    len.flexes[1].velocity.re.pop();
    expect(wheres(len)).toEqual(['flexes[1].velocity.re']);
    const cls = base();
    cls.flexes[1].class = null;
    expect(wheres(cls)).toEqual(expect.arrayContaining(['flexes[1].class']));
    const site = base();
    site.joints[4].site = 'Z';
    expect(wheres(site)).toEqual(['joints[4].site']);
    const tol = base();
    tol.tolerance = 1e-6;
    expect(wheres(tol)).toEqual(['tolerance']);
    const counts = base();
    counts.counts.flexes = 12;
    expect(wheres(counts)).toEqual(expect.arrayContaining(['flexes']));
  });

  it('lists at most 20 problems and says how many more there are', () => {
    const v = base();
    v.flexes[0].velocity.re = v.flexes[0].velocity.re.map(() => 'x');
    const ps = inputProblems(() => parseModesJson(JSON.stringify(v)));
    expect(ps).toHaveLength(21);
    expect(ps[20].where).toBe('(more)');
    expect(ps[20].what).toBe(`${v.flexes[0].velocity.re.length - 20} further problems are not listed`);
  });
});

describe('one format for the CLI and the app', () => {
  const io: CliIO = { out: () => {}, err: () => {}, readText: (p) => readFileSync(p, 'utf8') };
  function cli(c: Case, format: '--json' | '--csv'): string {
    let out = '';
    const argv = [c.spec, '--cells', `${c.cells[0]}x${c.cells[1]}`, '--bc', c.bc, format];
    const code = exportModesCommand.run(parseArgs(argv, exportModesCommand.flags, exportModesCommand.name, exportModesCommand.maxPositional), { ...io, out: (t) => (out += t) });
    expect(code).toBe(0);
    return out;
  }

  it('shimmy export-modes prints modesToJson / modesToCsv of the same run', () => {
    for (const c of [REAL, TWISTED]) {
      const r = c === REAL ? real : twisted;
      // the CLI writes the self-stresses too, localised and classified
      const stressClassification = classifyStresses(r.supercell, r.analysis, { window: 3, strip: 2 });
      const d: ModeData = modeDataOfRun({ spec: c.spec, supercell: r.supercell, counts: countsOf(r.analysis), classification: r.classification, stressClassification });
      expect(cli(c, '--json')).toBe(modesToJson(d));
      expect(cli(c, '--csv')).toBe(modesToCsv(d));
    }
  });

  it("the app's export of the same run is the same file, plus the self-stresses", async () => {
    const s: AppState = { ...defaultState(), framework: { kind: 'gallery', name: 'twisted-kagome', params: { twist: 15 } }, cells: TWISTED.cells, bc: TWISTED.bc };
    const r = await analyse({ framework: buildGallery(TWISTED.spec), cells: s.cells, bc: s.bc, tolerance: s.tolerance, solver: 'auto', window: 3, strip: 2, stresses: true, classify: true });
    const app = modeDataOfResult(r, s);
    expect(app.selfStresses).toHaveLength(app.counts.selfStresses);
    expect(differences({ ...app, selfStresses: null }, twisted.data)).toEqual([]);
    expect(differences(parseModesJson(modesToJson(app)), app)).toEqual([]);
  });

  it("the app's unclassified basis with self-stresses reads back bit for bit", async () => {
    const s: AppState = { ...defaultState(), framework: { kind: 'gallery', name: 'kagome', params: {} }, cells: [3, 3], bc: 'periodic', classify: false };
    const r = await analyse({ framework: buildGallery('gallery:kagome'), cells: s.cells, bc: s.bc, tolerance: s.tolerance, solver: 'auto', window: 3, strip: 2, stresses: true, classify: false });
    const app = modeDataOfResult(r, s);
    expect(app.classification).toBeNull();
    expect(app.flexes.every((f) => f.class === null)).toBe(true);
    expect(app.selfStresses).toHaveLength(r.counts.selfStresses);
    expect(app.counts.selfStresses).toBeGreaterThan(0);
    const back = parseModesJson(modesToJson(app));
    expect(differences(back, app)).toEqual([]);
    for (const st of back.selfStresses!) expect(st.tension.re).toHaveLength(back.bars.length);
  });
});
