/** The SVG figure: rest shape, displaced shape, arrows, boundary marks, legend and caption, as vectors. */
import { AMPLITUDE_GRADIENT, amplitudeColour, INK, STRESS_GRADIENT, stressColour } from '../stage/colours.js';
import { BarKind, computeFrame, labelPlacement, newFrame, toScreen, type Vec } from '../stage/scene.js';
import { CAPTION_LINE, captionHeight, figureStrokes, type FigureSpec } from './figure.js';

const n2 = (x: number) => (Math.round(x * 100) / 100).toString();

function esc(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
}

export function svgFigure(f: FigureSpec, title: string, description: string): string {
  const { model, view: v } = f;
  const W = v.width;
  const H = v.height + captionHeight(f.caption.length);
  const sizes = figureStrokes(f);
  const gain = f.arrowScale ?? 1;
  const sc = (x: number, y: number) => toScreen(v, x, y);
  const frame = computeFrame(model, f.field, f.turns, f.field ? f.arrows : 'none', newFrame(model));
  const out: string[] = [];
  out.push(`<?xml version="1.0" encoding="UTF-8"?>`);
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" width="${f.outerSize ? f.outerSize[0] : n2(W)}" height="${f.outerSize ? f.outerSize[1] : n2(H)}" viewBox="0 0 ${n2(W)} ${n2(H)}" font-family="system-ui, Helvetica, Arial, sans-serif">`);
  out.push(`<title>${esc(title)}</title>`);
  out.push(`<desc>${esc(description)}</desc>`);
  out.push(`<defs><clipPath id="drawing"><rect x="0" y="0" width="${W}" height="${v.height}"/></clipPath>`);
  if (f.legend) {
    const stops = f.legend.kind === 'amplitude' ? AMPLITUDE_GRADIENT : STRESS_GRADIENT;
    out.push(`<linearGradient id="legend-gradient" x1="0" x2="1" y1="0" y2="0">${stops.map((c, i) => `<stop offset="${n2(i / (stops.length - 1))}" stop-color="${c}"/>`).join('')}</linearGradient>`);
  }
  out.push(`</defs>`);
  const bg = f.background === undefined ? INK.background : f.background;
  if (bg !== null) out.push(`<rect id="background" x="0" y="0" width="${n2(W)}" height="${n2(H)}" fill="${bg}"/>`);
  out.push(`<g clip-path="url(#drawing)">`);
  const seg = (a: Vec, b: Vec, attrs = '') => `<line x1="${n2(a[0])}" y1="${n2(a[1])}" x2="${n2(b[0])}" y2="${n2(b[1])}"${attrs}/>`;
  if (f.rest && f.field) {
    const rest = computeFrame(model, null, 0, 'none', newFrame(model));
    out.push(`<g id="rest-shape" stroke="${INK.rest}" stroke-width="${n2(Math.max(0.5, sizes.bar / 1.25))}" stroke-linecap="round">`);
    for (let r = 0; r < model.m; r++) out.push(seg(sc(rest.bars[4 * r], rest.bars[4 * r + 1]), sc(rest.bars[4 * r + 2], rest.bars[4 * r + 3])));
    out.push(`</g>`);
  }
  out.push(`<g id="bars" stroke="${INK.bar}" stroke-width="${n2(sizes.bar)}" stroke-linecap="round">`);
  for (let r = 0; r < model.m; r++) {
    const colour = f.stress ? stressColour(f.stress[r]) : model.kinds[r] === BarKind.Wrapped ? INK.stub : null;
    out.push(seg(sc(frame.bars[4 * r], frame.bars[4 * r + 1]), sc(frame.bars[4 * r + 2], frame.bars[4 * r + 3]), colour ? ` stroke="${colour}"` : ''));
  }
  out.push(`</g>`);
  if (f.field && f.arrows !== 'none') {
    out.push(`<g id="arrows" stroke="${INK.arrow}" fill="${INK.arrow}" stroke-width="${n2(sizes.arrow)}">`);
    for (let j = 0; j < model.n; j++) {
      const [x, y] = sc(frame.joints[2 * j], frame.joints[2 * j + 1]);
      const ax = frame.arrows[2 * j] * v.scale * gain;
      const ay = -frame.arrows[2 * j + 1] * v.scale * gain;
      const len = Math.hypot(ax, ay);
      if (len < 1.5) continue;
      const ux = ax / len;
      const uy = ay / len;
      const head = Math.min(len * 0.45, 3 + 3 * sizes.arrow);
      const bx = x + ux * (len - head);
      const by = y + uy * (len - head);
      out.push(seg([x, y], [bx, by]));
      out.push(`<polygon stroke="none" points="${n2(x + ax)},${n2(y + ay)} ${n2(bx - uy * head * 0.5)},${n2(by + ux * head * 0.5)} ${n2(bx + uy * head * 0.5)},${n2(by - ux * head * 0.5)}"/>`);
    }
    out.push(`</g>`);
  }
  const rel = f.field?.relative;
  out.push(`<g id="joints" stroke="${INK.outline}" stroke-width="1" fill="${INK.joint}">`);
  for (let j = 0; j < model.n; j++) {
    const [x, y] = sc(frame.joints[2 * j], frame.joints[2 * j + 1]);
    const fill = rel && f.colour ? ` fill="${amplitudeColour(rel[j])}"` : '';
    out.push(`<circle cx="${n2(x)}" cy="${n2(y)}" r="${n2(sizes.joint - 0.5)}"${fill}/>`);
  }
  out.push(`</g>`);
  out.push(`<g id="boundary">`);
  for (const mark of model.marks) {
    if (mark.kind === 'ground-line') {
      const a = sc(mark.a[0], mark.a[1]);
      const b = sc(mark.b[0], mark.b[1]);
      const ox = mark.outward[0];
      const oy = -mark.outward[1];
      out.push(seg(a, b, ` stroke="${INK.ground}" stroke-width="2"`));
      const len = Math.hypot(b[0] - a[0], b[1] - a[1]) || 1;
      const tx = (b[0] - a[0]) / len;
      const ty = (b[1] - a[1]) / len;
      const steps = Math.max(2, Math.floor(len / 9));
      const d: string[] = [];
      for (let i = 0; i <= steps; i++) {
        const px = a[0] + ((b[0] - a[0]) * i) / steps;
        const py = a[1] + ((b[1] - a[1]) * i) / steps;
        d.push(`M${n2(px)} ${n2(py)}L${n2(px + 7 * ox + 4 * tx)} ${n2(py + 7 * oy + 4 * ty)}`);
      }
      out.push(`<path d="${d.join('')}" stroke="${INK.ground}" stroke-width="1" fill="none"/>`);
    } else if (mark.kind === 'ground-end') {
      const [x, y] = sc(mark.at[0], mark.at[1]);
      out.push(`<rect x="${n2(x - 2.5)}" y="${n2(y - 2.5)}" width="5" height="5" fill="${INK.ground}"/>`);
    } else if (mark.kind === 'wrap-line') {
      const a = sc(mark.a[0], mark.a[1]);
      const b = sc(mark.b[0], mark.b[1]);
      out.push(seg(a, b, ` stroke="${INK.marker}" stroke-width="1.2" stroke-dasharray="5 5"`));
      const len = Math.hypot(b[0] - a[0], b[1] - a[1]) || 1;
      const tx = (b[0] - a[0]) / len;
      const ty = (b[1] - a[1]) / len;
      const ox = mark.outward[0];
      const oy = -mark.outward[1];
      for (const t of [0.25, 0.75]) {
        const px = a[0] + (b[0] - a[0]) * t + ox * 4;
        const py = a[1] + (b[1] - a[1]) * t + oy * 4;
        out.push(`<polyline points="${n2(px - tx * 5)},${n2(py - ty * 5)} ${n2(px + ox * 6)},${n2(py + oy * 6)} ${n2(px + tx * 5)},${n2(py + ty * 5)}" fill="none" stroke="${INK.marker}" stroke-width="1.6"/>`);
      }
    } else if (mark.kind === 'label') {
      const p = labelPlacement(v, mark);
      const deg = (p.angle * 180) / Math.PI;
      out.push(`<text x="${n2(p.x)}" y="${n2(p.y)}" font-size="12" fill="${INK.marker}" text-anchor="middle" dominant-baseline="middle" transform="rotate(${n2(deg)} ${n2(p.x)} ${n2(p.y)})">${esc(mark.text)}</text>`);
    }
  }
  out.push(`</g></g>`);
  if (f.legend) {
    const x = W - 188;
    const y = 12;
    const [lo, hi] = f.legend.kind === 'amplitude' ? ['0', 'max'] : ['compression', 'tension'];
    out.push(`<g id="legend" font-size="11" fill="${INK.text}">`);
    out.push(`<text x="${x}" y="${y}" dominant-baseline="hanging">${esc(f.legend.title)}</text>`);
    out.push(`<rect x="${x}" y="${y + 15}" width="170" height="9" fill="url(#legend-gradient)"/>`);
    out.push(`<text x="${x}" y="${y + 26}" font-size="10" dominant-baseline="hanging">${lo}</text>`);
    out.push(`<text x="${x + 170}" y="${y + 26}" font-size="10" text-anchor="end" dominant-baseline="hanging">${hi}</text>`);
    out.push(`</g>`);
  }
  if (f.caption.length) {
    out.push(`<g id="caption" font-size="12" fill="${INK.text}">`);
    f.caption.forEach((t, i) => out.push(`<text x="12" y="${n2(v.height + 4 + CAPTION_LINE * (i + 1))}">${esc(t)}</text>`));
    out.push(`</g>`);
  }
  out.push(`</svg>`);
  return out.join('\n') + '\n';
}
