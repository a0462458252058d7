/**
 * The app's pure parts, in Node: URL-hash and state-file round trips, the JSON path locator,
 * the drawing formula of the stage (checked against the rigidity condition), colour maps,
 * data exports, and the worker's compute functions against the core called directly.
 */
import { describe, expect, it } from 'vitest';
import { inputProblems } from '../helpers.js';
import { count } from '../../src/analysis.js';
import { InputError } from '../../src/errors.js';
import { classifyFlexes } from '../../src/flex/classify.js';
import { buildGallery } from '../../src/framework/gallery.js';
import { sparseMatVec } from '../../src/linalg/sparse.js';
import { CSV_COLUMNS, countsCsv, csvField, modesJson } from '../../src/app/export/data.js';
import { locate } from '../../src/app/jsonpath.js';
import { amplitudeColour, lightness, stressColour } from '../../src/app/stage/colours.js';
import { buildScene, computeFrame, fieldOf, newFrame, stressValues } from '../../src/app/stage/scene.js';
import { stateFromHash, stateToHash } from '../../src/app/state-link.js';
import { defaultFigure, defaultState, stateFromFile, stateToFile, type AppState, type FigureState } from '../../src/app/state.js';
import { analyse, participation } from '../../src/worker/compute.js';
import { geometryOf } from '../../src/worker/geometry.js';

function withChanges(f: (s: AppState) => void): AppState {
  const s = defaultState();
  f(s);
  return s;
}

/** Every figure setting away from its default (a size in mm with a decimal). */
const OTHER_FIGURE: FigureState = { width: 80.5, height: 50, unit: 'mm', dpi: 300, transparent: true, caption: false, caution: true, arrowScale: 1.5, lineScale: 0.75 };

describe('URL hash', () => {
  it('reads the documented example link', () => {
    const s = stateFromHash('#framework=gallery%3Akagome&cells=6x6&bc=free&flex=0');
    expect(s.framework).toEqual({ kind: 'gallery', name: 'kagome', params: {} });
    expect(s.cells).toEqual([6, 6]);
    expect(s.bc).toBe('free');
    expect(s.view.flex).toBe(0);
  });

  it('round-trips gallery, file, twisted and mixed boundaries and the view', () => {
    const states = [
      defaultState(),
      withChanges((s) => {
        s.framework = { kind: 'gallery', name: 'twisted-kagome', params: { twist: -22.5 } };
        s.cells = [7, 3];
        s.bc = 'x=twist:0.25,bottom=pinned,top=free';
        s.tolerance = 1e-7;
        s.solver = 'dense';
        s.view = { ...s.view, flex: 4, amplitude: 0.55, speed: 1.25, playing: false, phase: 0.3125, arrows: 'velocity', colour: false, rest: true, zoom: 2.5, centre: [1.25, -0.5] };
        s.gif = { frames: 12, width: 480, period: 3 };
      }),
      withChanges((s) => (s.figure = { ...OTHER_FIGURE })),
      withChanges((s) => (s.figure = { ...defaultFigure(), width: 2400.5, dpi: 96.5, caption: false })),
      withChanges((s) => {
        s.framework = { kind: 'file', framework: buildGallery('gallery:honeycomb'), fileName: 'honeycomb.json' };
        s.view.show = 'stress';
        s.view.stress = 2;
        s.classify = false;
      }),
    ];
    for (const s of states) {
      const back = stateFromHash(stateToHash(s));
      if (s.framework.kind === 'file') {
        // a file travels as its JSON; the file name is not part of the link
        expect(back.framework.kind).toBe('file');
        expect(back.framework.kind === 'file' && back.framework.framework).toEqual(s.framework.framework);
        back.framework = s.framework;
      }
      expect(back).toEqual(s);
    }
  });

  it('carries the figure settings only where they differ from the defaults', () => {
    expect(stateToHash(defaultState())).not.toContain('fig');
    const hash = stateToHash(withChanges((s) => (s.figure = { ...OTHER_FIGURE })));
    expect(hash).toContain('&figwidth=80.5&figheight=50&figunit=mm&figdpi=300&figtransparent=1&figcaption=0&figcaution=1&figarrows=1.5&figlines=0.75');
    expect(stateToHash(withChanges((s) => (s.figure.caution = true))).match(/fig\w+/g)).toEqual(['figcaution']);
  });

  it('names each bad figure key, with the sizes checked in the unit given', () => {
    const bad: [string, string][] = [
      ['figwidth', '20'],
      ['figheight', 'tall'],
      ['figunit', 'in'],
      ['figdpi', '10'],
      ['figtransparent', 'yes'],
      ['figcaption', '2'],
      ['figcaution', ''],
      ['figarrows', '0'],
      ['figlines', '11'],
    ];
    for (const [key, value] of bad) expect(inputProblems(() => stateFromHash(`#${key}=${value}`)).map((p) => p.where)).toEqual([`URL #${key}`]);
    // 1200 is a width in pixels, not in mm; the fix names the unit
    const mm = inputProblems(() => stateFromHash('#figwidth=1200&figheight=50&figunit=mm'));
    expect(mm.map((p) => p.where)).toEqual(['URL #figwidth']);
    expect(mm[0].fix).toBe('give a number from 10 to 1000 millimetres (the unit given)');
    // a unit without a size whose default (in pixels) is no size in mm: the missing key is named
    // (900 mm is a height in mm too, and a 900 mm height is written without the key)
    const missing = inputProblems(() => stateFromHash('#figunit=mm'));
    expect(missing.map((p) => p.where)).toEqual(['URL #figwidth']);
    expect(missing[0].what).toBe('not given, and the default 1200 is outside the sizes in mm');
    expect(stateFromHash(stateToHash(withChanges((s) => (s.figure = { ...OTHER_FIGURE, height: 900 })))).figure).toEqual({ ...OTHER_FIGURE, height: 900 });
    expect(stateFromHash('#figheight=100&figunit=mm&figwidth=150').figure).toEqual({ ...defaultFigure(), unit: 'mm', width: 150, height: 100 });
  });

  it('always carries framework, cells, bc and flex, URL-encoded', () => {
    const hash = stateToHash(withChanges((s) => (s.bc = 'x=periodic,y=pinned')));
    expect(hash.startsWith('#framework=gallery%3Atwisted-kagome%3Ftwist%3D15&cells=6x6&bc=x%3Dperiodic%2Cy%3Dpinned&flex=0')).toBe(true);
  });

  it('names every bad key and does not repair it', () => {
    let err: unknown;
    try {
      stateFromHash('#framework=gallery%3Akagom&cells=6by6&bc=sideways&flex=-1&colour=maybe&speed=0&zoomz=2&solver=fast');
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    const wheres = (err as InputError).problems.map((p) => p.where).join(' | ');
    for (const w of ['gallery name "kagom"', 'URL #cells', 'URL #bc', 'URL #flex', 'URL #colour', 'URL #speed', 'URL #zoomz', 'URL #solver']) expect(wheres).toContain(w);
  });
});

describe('state file', () => {
  it('round-trips to an identical file', () => {
    const s = withChanges((x) => {
      x.framework = { kind: 'file', framework: buildGallery('gallery:rotating-squares'), fileName: 'squares.json' };
      x.bc = 'x=pinned,y=twist:0.125';
      x.view.centre = [0.5, 0.25];
    });
    const text = stateToFile(s);
    expect(stateToFile(stateFromFile(text))).toBe(text);
    expect(stateFromFile(text)).toEqual(s);
  });

  it('round-trips the figure settings exactly, default and changed', () => {
    for (const figure of [defaultFigure(), OTHER_FIGURE, { ...defaultFigure(), width: 64, height: 8000, dpi: 36, lineScale: 10 }]) {
      const s = withChanges((x) => (x.figure = { ...figure }));
      const text = stateToFile(s);
      expect(JSON.parse(text).figure).toEqual(figure);
      const back = stateFromFile(text);
      expect(back).toEqual(s);
      expect(back.figure).toEqual(figure);
      expect(stateToFile(back)).toBe(text);
    }
  });

  it('reads a file written before the figure settings with the default figure', () => {
    const s = withChanges((x) => {
      x.cells = [4, 5];
      x.view.amplitude = 0.45;
    });
    const v = JSON.parse(stateToFile(s));
    delete v.figure;
    expect(Object.keys(v)).toEqual(['format', 'version', 'framework', 'cells', 'bc', 'tolerance', 'solver', 'window', 'strip', 'stresses', 'classify', 'view', 'gif']);
    const back = stateFromFile(JSON.stringify(v, null, 2));
    expect(back).toEqual(s);
    expect(back.figure).toEqual({ width: 1200, height: 900, unit: 'px', dpi: 192, transparent: false, caption: true, caution: false, arrowScale: 1, lineScale: 1 });
  });

  it('names each bad figure setting by its JSON path and gives the fix', () => {
    const bad: [keyof FigureState, unknown][] = [
      ['width', 20],
      ['height', 'tall'],
      ['unit', 'in'],
      ['dpi', 10],
      ['transparent', 'yes'],
      ['caption', 1],
      ['caution', null],
      ['arrowScale', 0],
      ['lineScale', 11],
    ];
    for (const [key, value] of bad) {
      const v = JSON.parse(stateToFile(defaultState()));
      v.figure[key] = value;
      const problems = inputProblems(() => stateFromFile(JSON.stringify(v)));
      expect(problems.map((p) => p.where)).toEqual([`figure.${key}`]);
      expect(problems[0].fix).not.toBe('');
    }
    // a missing setting is named too
    const missing = JSON.parse(stateToFile(defaultState()));
    delete missing.figure.caution;
    expect(inputProblems(() => stateFromFile(JSON.stringify(missing))).map((p) => [p.where, p.what])).toEqual([['figure.caution', 'expected true or false, got nothing']]);
    // sizes are checked in the unit given: 1200 is pixels, not mm
    const mm = JSON.parse(stateToFile(defaultState()));
    mm.figure = { ...mm.figure, unit: 'mm', height: 50 };
    const p = inputProblems(() => stateFromFile(JSON.stringify(mm)));
    expect(p.map((x) => x.where)).toEqual(['figure.width']);
    expect(p[0].fix).toBe('give a number from 10 to 1000 millimetres (the unit given)');
    // an unknown setting, and a figure part that is not an object
    const extra = JSON.parse(stateToFile(defaultState()));
    extra.figure.background = 'white';
    expect(inputProblems(() => stateFromFile(JSON.stringify(extra))).map((x) => x.where)).toEqual(['figure.background']);
    const notObject = JSON.parse(stateToFile(defaultState()));
    notObject.figure = [1200, 900];
    expect(inputProblems(() => stateFromFile(JSON.stringify(notObject))).map((x) => [x.where, x.what])).toEqual([['figure', 'expected an object, got a list']]);
  });

  it('reports bad fields with their JSON path', () => {
    const v = JSON.parse(stateToFile(defaultState()));
    v.cells = [0, 3];
    v.view.arrows = 'both';
    v.gif.frames = 1;
    v.extra = true;
    let err: unknown;
    try {
      stateFromFile(JSON.stringify(v));
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).problems.map((p) => p.where)).toEqual(expect.arrayContaining(['cells[0]', 'view.arrows', 'gif.frames', 'extra']));
  });
});

describe('JSON path locator', () => {
  const text = '{\n  "lattice": [[1, 0], [0, 1]],\n  "joints": [{"id": "A", "at": [0, 0.5]}],\n  "bars": [{"from": "A", "to": "A", "shift": [1, 0]}, {"from": "A", "to": "B", "shift": [0, 1]}]\n}';
  const at = (where: string) => {
    const s = locate(text, where);
    return s ? text.slice(s[0], s[1]) : null;
  };
  it('finds values by path, falling back to the nearest parent', () => {
    expect(at('bars[1].to')).toBe('"B"');
    expect(at('joints[0].at')).toBe('[0, 0.5]');
    expect(at('lattice[1]')).toBe('[0, 1]');
    expect(at('bars[1].shift[5]')).toBe('[0, 1]');
    expect(at('(top level)')).toBeNull();
  });
  it('finds line and column positions', () => {
    expect(at('line 2, column 3')).toBe('"');
  });
});

describe('stage drawing', () => {
  /**
   * A flex leaves every bar length unchanged to first order (the definition of ker R); the
   * drawn bars — kept, wrapped stubs moving with their phase factor, grounded — must show that
   * at every phase: d/dε |end − start| = p̂ · (Δend − Δstart) = 0.
   */
  it.each([
    ['gallery:kagome', [4, 3], 'x=twist:0.25,y=free'],
    ['gallery:twisted-kagome?twist=20', [3, 3], 'x=twist:0.2,y=free'],
    ['gallery:kagome', [3, 3], 'twist:0,0.35'],
    ['gallery:square', [4, 4], 'periodic'],
    ['gallery:square', [3, 4], 'left=pinned'],
  ] as const)('animates flexes of %s %j %s without first-order bar stretch', (spec, cells, bc) => {
    const { supercell, analysis } = count({ framework: buildGallery(spec), cells: [cells[0], cells[1]], boundary: bc });
    const model = buildScene(geometryOf(supercell));
    const basis = analysis.flexBasis().vectors;
    expect(basis.length).toBe(analysis.flexes);
    expect(basis.length).toBeGreaterThan(0);
    const rest = computeFrame(model, null, 0, 'none', newFrame(model));
    const eps = 1e-6;
    for (const u of basis.slice(0, 4)) {
      const field = fieldOf(model, { re: u.re, im: supercell.real ? null : u.im }, 1);
      field.eps = eps;
      for (const turns of [0, 0.125, 0.3, 0.75]) {
        const f = computeFrame(model, field, turns, 'none', newFrame(model));
        let worst = 0;
        for (let r = 0; r < model.m; r++) {
          const px = rest.bars[4 * r + 2] - rest.bars[4 * r];
          const py = rest.bars[4 * r + 3] - rest.bars[4 * r + 1];
          const L = Math.hypot(px, py);
          const dx = f.bars[4 * r + 2] - rest.bars[4 * r + 2] - (f.bars[4 * r] - rest.bars[4 * r]);
          const dy = f.bars[4 * r + 3] - rest.bars[4 * r + 3] - (f.bars[4 * r + 1] - rest.bars[4 * r + 1]);
          worst = Math.max(worst, Math.abs((px * dx + py * dy) / L) / eps);
        }
        expect(worst).toBeLessThan(1e-6);
      }
    }
  });

  it('draws wrapped bars as stubs of the unwrapped bar vector', () => {
    const { supercell } = count({ framework: buildGallery('gallery:square'), cells: [3, 3], boundary: 'periodic' });
    const g = geometryOf(supercell);
    const model = buildScene(g);
    const f = computeFrame(model, null, 0, 'none', newFrame(model));
    for (let r = 0; r < model.m; r++) {
      expect(f.bars[4 * r + 2] - f.bars[4 * r]).toBeCloseTo(g.barVector[2 * r], 12);
      expect(f.bars[4 * r + 3] - f.bars[4 * r + 1]).toBeCloseTo(g.barVector[2 * r + 1], 12);
    }
  });

  it('marks pinned sides with ground and twisted axes with wrap lines', () => {
    const { supercell } = count({ framework: buildGallery('gallery:square'), cells: [3, 3], boundary: 'x=twist:0.25,bottom=pinned' });
    const kinds = buildScene(geometryOf(supercell)).marks.map((m) => m.kind);
    expect(kinds.filter((k) => k === 'wrap-line')).toHaveLength(2);
    expect(kinds.filter((k) => k === 'ground-line')).toHaveLength(1);
    expect(kinds.filter((k) => k === 'ground-end')).toHaveLength(3);
  });

  it('scales a self-stress to [−1, 1] with the largest entry at ±1', () => {
    const v = stressValues({ re: Float64Array.from([0.5, -2, 1]), im: null });
    expect(Array.from(v)).toEqual([0.25, -1, 0.5]);
    const c = stressValues({ re: Float64Array.from([0, 0]), im: Float64Array.from([1, -0.5]) });
    expect(c[0]).toBeCloseTo(1, 12);
    expect(c[1]).toBeCloseTo(-0.5, 12);
  });
});

describe('colour maps', () => {
  // A sequential map should be monotone in lightness, a diverging one lightest at zero
  // (common practice for maps readable with colour-vision deficiencies and in greyscale).
  it('amplitude map: lightness strictly falls from 0 to 1', () => {
    let prev = Infinity;
    for (let i = 0; i <= 50; i++) {
      const L = lightness(amplitudeColour(i / 50));
      expect(L).toBeLessThan(prev);
      prev = L;
    }
    expect(lightness(amplitudeColour(0)) - lightness(amplitudeColour(1))).toBeGreaterThan(60);
  });
  it('stress map: lightest at zero, darker towards both ends', () => {
    for (let i = 0; i < 25; i++) {
      expect(lightness(stressColour(i / 25))).toBeGreaterThan(lightness(stressColour((i + 1) / 25)));
      expect(lightness(stressColour(-i / 25))).toBeGreaterThan(lightness(stressColour(-(i + 1) / 25)));
    }
  });
});

describe('worker computation', () => {
  const job = (spec: string, cells: [number, number], bc: string, classify = true) => ({
    framework: buildGallery(spec),
    cells,
    bc,
    tolerance: 1e-9,
    solver: 'auto' as const,
    window: 3,
    strip: 2,
    stresses: true,
    classify,
  });

  it('gives the counts of count() and kernel vectors as modes', async () => {
    const stages: string[] = [];
    const r = await analyse(job('gallery:kagome', [3, 3], 'free'), { onProgress: (_f, s) => stages.push(s) });
    const { analysis, supercell } = count({ framework: buildGallery('gallery:kagome'), cells: [3, 3], boundary: 'free' });
    expect(r.counts.flexes).toBe(analysis.flexes);
    expect(r.counts.trivialFlexes).toBe(analysis.trivialFlexes);
    expect(r.counts.selfStresses).toBe(analysis.selfStresses);
    expect(r.modes).toHaveLength(analysis.flexes);
    const c = classifyFlexes(supercell, analysis, { window: 3, strip: 2 });
    expect(r.classification?.counts).toEqual(c.counts);
    // grouped by class in the documented order
    const order = ['local', 'line', 'decaying', 'bulk'];
    const seq = r.modes.map((m) => order.indexOf(m.class!));
    expect([...seq].sort((a, b) => a - b)).toEqual(seq);
    for (const m of r.modes) {
      const y = sparseMatVec(analysis.matrix(), m.re, m.im);
      const norm = Math.hypot(...y.re, ...y.im);
      expect(norm).toBeLessThan(1e-8);
    }
    expect(stages[0]).toMatch(/supercell/);
    expect(stages.at(-1)).toBe('done');
  });

  it('sends the self-stress basis and an unclassified basis when classes are off', async () => {
    const r = await analyse(job('gallery:kagome', [3, 3], 'periodic', false), {});
    expect(r.modeSource).toBe('basis');
    expect(r.classification).toBeNull();
    expect(r.stresses).toHaveLength(r.counts.selfStresses);
    expect(r.modes.every((m) => m.class === null)).toBe(true);
  });

  it('participation ratio is 1 for equal amplitudes and 1/J on one joint', () => {
    expect(participation(Float64Array.from([1, 0, 0, 1, 1, 0, 0, -1]), null)).toBeCloseTo(1, 12);
    expect(participation(Float64Array.from([1, 0, 0, 0, 0, 0, 0, 0]), null)).toBeCloseTo(1 / 4, 12);
  });
});

describe('data exports', () => {
  it('quotes CSV fields that need it (RFC 4180)', () => {
    expect(csvField('x=free,y=pinned')).toBe('"x=free,y=pinned"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField(3)).toBe('3');
  });

  it('writes one header and one row with the counts, and mode data that parse back', async () => {
    const s = withChanges((x) => {
      x.framework = { kind: 'gallery', name: 'kagome', params: {} };
      x.cells = [3, 3];
      x.bc = 'x=periodic,y=free';
    });
    const r = await analyse({ framework: buildGallery('gallery:kagome'), cells: [3, 3], bc: s.bc, tolerance: s.tolerance, solver: 'auto', window: 3, strip: 2, stresses: true, classify: true });
    const lines = countsCsv(r, s).trim().split('\r\n');
    expect(lines).toHaveLength(2);
    expect(lines[0].split(',')).toEqual([...CSV_COLUMNS]);
    expect(lines[1]).toContain('"x=periodic,y=free"');
    const j = JSON.parse(modesJson(r, s));
    expect(j.counts.flexes).toBe(r.counts.flexes);
    expect(j.flexes).toHaveLength(r.modes.length);
    expect(j.flexes[0].velocity.re).toHaveLength(2 * r.geometry.jointCount);
    expect(j.joints).toHaveLength(r.geometry.jointCount);
    expect(j.caution).toMatch(/first-order/);
  });
});
