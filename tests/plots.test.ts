/**
 * The app's plotting module (src/app/plots): tick values and labels, paths against their
 * scales, escaping, the sweep sizes text, the sweep CSV and plot from a real sweep, the phase
 * map's raster, snapping and zero set, and the edge plot from real edge data. Expected values
 * come from the core called here or from geometry, never from the plots' own output.
 */
import { describe, expect, it } from 'vitest';
import { InputError } from '../src/errors.js';
import { sweep } from '../src/flex/sweep.js';
import { buildGallery } from '../src/framework/gallery.js';
import { edges } from '../src/edges/edges.js';
import { decaySpectrum } from '../src/edges/spectrum.js';
import { phaseMap } from '../src/spectrum/phasemap.js';
import { zeroTopology } from '../src/spectrum/zero-set.js';
import { makeScale, tickLabel, ticksOf } from '../src/app/plots/axis.js';
import { linePlot, linePlotDocument } from '../src/app/plots/line-plot.js';
import { esc, svgDocument, text } from '../src/app/plots/svg.js';
import { linearSizeOf, parseSweepSizes, sweepCsv, sweepFigure, sweepPlotSpec, SWEEP_SERIES } from '../src/app/plots/sweep.js';
import { chargeLabel, sigmaName, colourRange, PHASE_STOPS, phaseColour, phaseMapFigure, rasterPixels, readout, snapPhase, splitAtWrap, zeroLineSegments } from '../src/app/plots/phasemap.js';
import { sideBranches, supercellPrediction, xiPlotSpec } from '../src/app/plots/edges.js';
import type { EdgesData, PhaseMapData } from '../src/worker/protocol.js';

/** The (x, y) vertices of a d3-shape path ("M1,2L3,4…"), split at each M. */
function pathRuns(d: string): [number, number][][] {
  return d
    .split('M')
    .filter(Boolean)
    .map((run) => run.split('L').map((p) => p.split(',').map(Number) as [number, number]));
}

function attrOf(markup: string, attr: string): string[] {
  return [...markup.matchAll(new RegExp(`\\s${attr}="([^"]*)"`, 'g'))].map((m) => m[1]);
}

describe('ticks and labels', () => {
  it('labels plain decimals, powers of ten and a typographic minus', () => {
    expect(tickLabel(0.25)).toBe('0.25');
    expect(tickLabel(-2)).toBe('−2');
    expect(tickLabel(1e-6)).toBe('10⁻⁶');
    expect(tickLabel(2e-7)).toBe('2×10⁻⁷');
    expect(tickLabel(1e5)).toBe('10⁵');
    expect(tickLabel(0)).toBe('0');
  });

  it('places linear ticks on round values at their scaled positions', () => {
    const s = makeScale('linear', [0, 1], [0, 100]);
    const t = ticksOf(s, 'linear', 6);
    expect(t.map((x) => x.value)).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
    for (const x of t) expect(x.at).toBeCloseTo(x.value * 100, 9);
    expect(t.map((x) => x.label)).toEqual(['0', '0.2', '0.4', '0.6', '0.8', '1']);
  });

  it('widens a linear domain to round ends and a log domain to whole decades', () => {
    expect(makeScale('linear', [3, 19], [0, 1]).domain()).toEqual([2, 20]);
    expect(makeScale('log', [2, 30], [0, 1]).domain()).toEqual([1, 100]);
    expect(() => makeScale('log', [0, 10], [0, 1])).toThrow(RangeError);
  });

  it('puts log ticks at m·10ⁿ, labels the decades, and spaces decades evenly', () => {
    const s = makeScale('log', [1, 1000], [0, 300]);
    const t = ticksOf(s, 'log');
    // 1…9 in three decades, and 1000
    expect(t).toHaveLength(28);
    expect(t.filter((x) => x.label !== null).map((x) => x.value)).toEqual([1, 10, 100, 1000]);
    for (const x of t) expect(x.at).toBeCloseTo(100 * Math.log10(x.value), 9);
    // within two decades 2 and 5 are labelled too
    const narrow = ticksOf(makeScale('log', [1, 100], [0, 1]), 'log');
    expect(narrow.filter((x) => x.label !== null).map((x) => x.value)).toEqual([1, 2, 5, 10, 20, 50, 100]);
  });
});

describe('svg text', () => {
  it('escapes markup characters in text and attributes', () => {
    expect(esc(`a<b & "c" 'd'>`)).toBe('a&lt;b &amp; &quot;c&quot; &#39;d&#39;&gt;');
    const t = text(1, 2, '<script>x</script>', { class: 'a"b' });
    expect(t).toBe('<text x="1" y="2" class="a&quot;b">&lt;script&gt;x&lt;/script&gt;</text>');
    const doc = svgDocument({ width: 10, height: 10, title: 'kagome <test> & "more"', background: null, body: [], prolog: true });
    expect(doc.startsWith('<?xml')).toBe(true);
    expect(doc).toContain('<title>kagome &lt;test&gt; &amp; &quot;more&quot;</title>');
    expect(doc).not.toContain('<test>');
  });
});

describe('line plot', () => {
  const spec = (kind: 'linear' | 'log', points: [number, number][]) =>
    linePlot({ width: 500, height: 300, title: 't', x: { label: 'N', kind }, y: { label: 'c', kind }, series: [{ key: 's', label: 's', colour: '#000', marker: 'circle', points, curves: [points] }], legend: false, idPrefix: 'p' });

  it('draws each curve through the scaled data points', () => {
    const pts: [number, number][] = [[1, 1], [2, 4], [3, 9]];
    const p = spec('linear', pts);
    const d = attrOf(p.body.join(''), 'd')[0];
    const runs = pathRuns(d);
    expect(runs).toHaveLength(1);
    runs[0].forEach(([x, y], i) => {
      expect(x).toBeCloseTo(p.x(pts[i][0]), 2);
      expect(y).toBeCloseTo(p.y(pts[i][1]), 2); // d3-shape writes 3 decimals
    });
    // y grows upwards on the page
    expect(p.y(9)).toBeLessThan(p.y(1));
  });

  it('breaks a curve on a log axis where a value is not positive', () => {
    const p = spec('log', [[1, 1], [2, 0], [3, 9], [4, 16]]);
    const runs = pathRuns(attrOf(p.body.join(''), 'd')[0]);
    expect(runs.map((r) => r.length)).toEqual([1, 2]);
    // the zero gets no marker: 3 circles
    expect(p.body.join('').match(/<circle/g)).toHaveLength(3);
  });
});

describe('sweep sizes text', () => {
  it('reads squares, ranges, rectangles and strips', () => {
    expect(parseSweepSizes('3..6')).toEqual([[3, 3], [4, 4], [5, 5], [6, 6]]);
    expect(parseSweepSizes('4, 6, 8')).toEqual([[4, 4], [6, 6], [8, 8]]);
    expect(parseSweepSizes('4x2,6×3, 8X4')).toEqual([[4, 2], [6, 3], [8, 4]]);
    expect(parseSweepSizes('3x4..10:2')).toEqual([[3, 4], [3, 6], [3, 8], [3, 10]]);
    expect(parseSweepSizes('4..8x3:2')).toEqual([[4, 3], [6, 3], [8, 3]]);
    expect(parseSweepSizes('4,4,5')).toEqual([[4, 4], [5, 5]]);
  });

  it('refuses bad text naming the field and how to write it', () => {
    for (const [bad, what] of [
      ['', /no size/],
      ['6..3', /backwards/],
      ['abc', /not a whole number/],
      ['2x3x4', /more than two sides/],
      ['4..6x2..3', /range on both sides/],
      ['0', /at least 1/],
      ['60', /more than the 2500 cells/],
      ['4:2', /step but no range/],
      ['3,,4', /empty entry/],
    ] as const) {
      let err: unknown;
      try {
        parseSweepSizes(bad);
      } catch (e) {
        err = e;
      }
      expect(err, bad).toBeInstanceOf(InputError);
      const p = (err as InputError).problems[0];
      expect(p.where).toBe('sizes');
      expect(p.what).toMatch(what);
      expect(p.fix).toMatch(/KxA\.\.B/);
    }
  });
});

describe('sweep plot and CSV from a real sweep (kagome, free, 2…5)', () => {
  const r = sweep(buildGallery('gallery:kagome'), { sizes: [[2, 2], [3, 3], [4, 4], [5, 5]], boundary: 'free' });

  it('writes one CSV row per size with the counts of the sweep', () => {
    const csv = sweepCsv(r, 'kagome, test');
    const lines = csv.trim().split('\n');
    const data = lines.filter((l) => !l.startsWith('#'));
    expect(data[0]).toBe('N1,N2,N,joints,bars,flexes,trivial,selfStresses,local,line,decaying,bulk,seconds');
    expect(data).toHaveLength(1 + r.rows.length);
    const head = data[0].split(',');
    r.rows.forEach((row, i) => {
      const cells = data[i + 1].split(',');
      for (const k of ['N1', 'N2', 'flexes', 'local', 'line', 'decaying', 'bulk', 'selfStresses'] as const) expect(Number(cells[head.indexOf(k)])).toBe(row[k]);
      expect(Number(cells[head.indexOf('N')])).toBe(row.N1);
    });
    expect(lines.filter((l) => l.startsWith('# fit '))).toHaveLength(SWEEP_SERIES.length);
    expect(csv).toContain(`exact=${r.polynomialFits.flexes.exact!.formula}`);
  });

  it('draws one curve per quantity, each the fitted polynomial on the scales', () => {
    const { svg, plot } = sweepFigure(r, { log: false, framework: 'kagome <free>', background: '#fff', prolog: true });
    const series = attrOf(svg, 'data-series');
    const curves = [...svg.matchAll(/<path d="([^"]*)"[^>]*data-series="([^"]+)" class="series-curve"/g)];
    expect(curves.map((m) => m[2])).toEqual(SWEEP_SERIES.map((s) => s.key));
    expect(new Set(series)).toEqual(new Set(SWEEP_SERIES.map((s) => s.key)));
    for (const [, d, key] of curves) {
      const f = r.polynomialFits[key as (typeof SWEEP_SERIES)[number]['key']];
      const run = pathRuns(d)[0];
      for (const [px, py] of [run[0], run[run.length - 1]]) {
        const N = plot.x.invert(px);
        expect(py).toBeCloseTo(plot.y(f.a2! * N * N + f.a1! * N + f.a0!), 2);
      }
      expect(plot.x.invert(run[0][0])).toBeCloseTo(2, 2);
      expect(plot.x.invert(run[run.length - 1][0])).toBeCloseTo(5, 2);
    }
    expect(svg).toContain('kagome &lt;free&gt;');
    expect(svg).toContain(r.polynomialFits.flexes.exact!.formula);
  });

  it('names N by the sweep rule and leaves zero counts off log axes', () => {
    expect(linearSizeOf({ N1: 3, N2: 8 }, 'N2')).toBe(8);
    expect(linearSizeOf({ N1: 2, N2: 8 }, '√(N1·N2)')).toBe(4);
    const spec = sweepPlotSpec(r, { log: true, framework: 'k' });
    expect(spec.x.kind).toBe('log');
    const plot = linePlot(spec);
    // local, decaying and bulk are zero at every size here: only flexes and line get markers
    const zeroSeries = SWEEP_SERIES.filter((s) => r.rows.every((row) => row[s.key] === 0)).length;
    const markers = plot.body.join('').match(/<g class="series" data-series="[^"]+">(.*?)<\/g>/g)!;
    expect(markers).toHaveLength(SWEEP_SERIES.length);
    expect(spec.series.filter((s) => s.label.endsWith('all 0'))).toHaveLength(zeroSeries);
  });
});

describe('phase map figure', () => {
  it('cuts a closed zero line into segments on p·θ1 + q·θ2 ≡ c with the length of the closed line', () => {
    // a primitive closed line (p, q) on the unit torus has length √(p² + q²) (common practice)
    for (const [p, q, c] of [[1, 0, 0.25], [0, 1, 0], [1, 1, 0.5], [1, -1, 0], [2, 1, 0.3], [1, -3, 0.7]] as const) {
      const segs = zeroLineSegments(p, q, c);
      let length = 0;
      for (const [a, b] of segs) {
        for (const [x, y] of [a, b]) {
          expect(x).toBeGreaterThanOrEqual(-1e-12);
          expect(x).toBeLessThanOrEqual(1 + 1e-12);
          expect(y).toBeGreaterThanOrEqual(-1e-12);
          expect(y).toBeLessThanOrEqual(1 + 1e-12);
          const v = p * x + q * y - c;
          expect(Math.abs(v - Math.round(v))).toBeLessThan(1e-12);
        }
        length += Math.hypot(b[0] - a[0], b[1] - a[1]);
      }
      expect(length).toBeCloseTo(Math.hypot(p, q), 9);
    }
  });

  it('snaps to the phases k/N of the supercell and reads the nearest sample', () => {
    expect(snapPhase([0.26, 0.99], [4, 3])).toEqual({ theta: [0.25, 0], k: [1, 0] });
    expect(snapPhase([0.5, 0.5], [1, 2])).toEqual({ theta: [0, 0.5], k: [0, 1] });
    const g = 4;
    const sigma1 = Float64Array.from({ length: g * g }, (_, i) => (i + 1) / 100);
    const pm = { grid: g, sigma1, sigmaMax: 1, kernel: new Int32Array(g * g) };
    expect(readout(pm, [0.99, 0]).theta).toEqual([0, 0]);
    const r = readout(pm, [0.5, 0.26]);
    // sample (i1, i2) = (2, 1) is index i2·g + i1 = 6
    expect(r.sigma).toBe(sigma1[6]);
    expect(r.log10).toBeCloseTo(Math.log10(0.07), 12);
  });

  it('paints the raster centred on the samples, periodic, dark at the bottom of the range', () => {
    const g = 4;
    const sigma1 = Float64Array.from({ length: g * g }, (_, i) => 10 ** -(i % 5));
    const pm = { grid: g, sigma1, sigmaMax: 1, tolerance: { relative: 1e-9, absolute: 1e-9 } };
    const range = colourRange(pm);
    expect(range).toEqual({ lo: -4, hi: 0, clipped: false });
    const px = rasterPixels(pm, range);
    expect(px.size).toBe(g + 1);
    const at = (r: number, c: number) => [...px.data.slice((r * px.size + c) * 4, (r * px.size + c) * 4 + 3)];
    const hex = (h: string) => [1, 3, 5].map((i) => parseInt(h.slice(i, i + 2), 16));
    // bottom row (θ2 = 0), column 0: sample 0 has σ = 1, the top of the range
    expect(at(g, 0)).toEqual(hex(PHASE_STOPS[PHASE_STOPS.length - 1]));
    // sample i = 4 (i1 = 0, i2 = 1): σ = 10⁻⁴, the bottom of the range
    expect(at(g - 1, 0)).toEqual(hex(PHASE_STOPS[0]));
    // the last column and the top row repeat the first ones
    for (let r = 0; r <= g; r++) expect(at(r, g)).toEqual(at(r, 0));
    for (let c = 0; c <= g; c++) expect(at(0, c)).toEqual(at(g, c));
    expect(phaseColour(0.5)).toEqual(hex(PHASE_STOPS[3]));
  });

  it('splits a zero curve where it wraps and labels charges', () => {
    expect(splitAtWrap([[0.9, 0.5], [0.95, 0.5], [0.02, 0.5], [0.1, 0.5]])).toHaveLength(2);
    expect([1, -1, 0, null].map(chargeLabel)).toEqual(['+1', '−1', '0', '?']);
    expect([0, 1, 11].map(sigmaName)).toEqual(['σ₁', 'σ₂', 'σ₁₂']);
  });

  it('draws the zero set of real maps: kagome lines, twisted kagome charged point', () => {
    for (const spec of ['gallery:kagome', 'gallery:twisted-kagome?twist=15']) {
      const fw = buildGallery(spec);
      const map = phaseMap(fw, { grid: 16 });
      const topo = zeroTopology(fw, map);
      const data: PhaseMapData = {
        grid: map.grid,
        dof: map.dof,
        bars: map.bars,
        tolerance: map.tolerance,
        sigmaMax: map.sigmaMax,
        sigma1: map.smallest[map.genericKernel],
        kernel: map.kernel,
        genericKernel: map.genericKernel,
        lines: map.zeroSet.lines,
        isolated: map.zeroSet.isolated.map((z) => ({ theta: z.theta, kernel: z.kernel })),
        points: map.zeroSet.points.length,
        zeroPoints: topo.zeroPoints,
        zeroCurves: topo.zeroCurves,
        nearZeros: topo.nearZeros,
      };
      const svg = phaseMapFigure(data, { side: 300, title: spec, image: 'data:image/png;base64,AAAA', background: '#ffffff', idPrefix: 'pm', prolog: true });
      const expectedSegments = map.zeroSet.lines.reduce((n, l) => n + zeroLineSegments(l.p, l.q, l.c).length, 0);
      expect(svg.match(/class="zero-line"/g) ?? []).toHaveLength(expectedSegments);
      expect(svg.match(/class="zero-point"/g) ?? []).toHaveLength(topo.zeroPoints.length);
      for (const z of topo.zeroPoints) expect(svg).toContain(`>${chargeLabel(z.charge)}</text>`);
      expect(svg).toContain('data-testid="phasemap-colorbar"');
      expect(svg).toContain('θ₁ (turns)');
      if (spec === 'gallery:kagome') expect(expectedSegments).toBeGreaterThan(0);
      else expect(topo.zeroPoints.length).toBeGreaterThan(0);
    }
  });
});

describe('edge plot and counts', () => {
  const fw = buildGallery('gallery:twisted-kagome?twist=15');
  const d: EdgesData = { phase: 0.25, a1: edges({ framework: fw, phase: 0.25, along: 'a1', grid: 12, strip: 0 }), a2: edges({ framework: fw, phase: 0.25, along: 'a2', grid: 12, strip: 0 }) };

  it('plots every root of every side over θ', () => {
    const spec = xiPlotSpec(d, { framework: 'tk' });
    expect(spec.series.map((s) => s.key)).toEqual(['bottom', 'top', 'left', 'right']);
    const bottomRoots = d.a1.grid.reduce((n, r) => n + r.low.length, 0);
    expect(spec.series[0].points).toHaveLength(bottomRoots);
    expect(bottomRoots).toBeGreaterThan(0);
    const { branches } = sideBranches(d, 'right');
    expect(branches[0].map((p) => p[0])).toEqual(d.a2.grid.filter((r) => r.high.length > 0).map((r) => r.theta));
    const { svg } = linePlotDocument(spec, { background: null, prolog: false });
    expect(svg).toContain('data-series="bottom"');
  });

  it('sums the predicted counts over the edge phases a twisted supercell holds', () => {
    // x periodic over 4 cells: edge phases 0, 1/4, 1/2, 3/4; 12 phases in the table hold them
    const p = supercellPrediction(d, [4, 6], 'x=periodic,y=free');
    const expected = (low: boolean) => {
      const v = [0, 1, 2, 3].map((k) => decaySpectrum(fw, 'a1', k / 4)).map((s) => (low ? s.predictedLow : s.predictedHigh));
      return v.some((x) => x === null) ? null : v.reduce((a, b) => a! + b!, 0);
    };
    expect(p.sums.bottom).toBe(expected(true));
    expect(p.sums.top).toBe(expected(false));
    expect(p.sums.left).toBeUndefined();
    // 5 cells: the phases k/5 are not in a 12-phase table
    expect(supercellPrediction(d, [5, 6], 'x=periodic,y=free').note).toMatch(/not all in the 12-phase table/);
    expect(supercellPrediction(d, [4, 6], 'free').note).toMatch(/not twisted/);
  });
});
