/** Paints a figure on a 2D canvas (PNG snapshots and GIF frames). */
import { AMPLITUDE_GRADIENT, amplitudeColour, INK, STRESS_GRADIENT, stressColour } from '../stage/colours.js';
import { BarKind, computeFrame, labelPlacement, newFrame, toScreen, type Vec } from '../stage/scene.js';
import { CAPTION_LINE, captionHeight, figureStrokes, type FigureSpec } from './figure.js';

export function paintFigure(ctx: CanvasRenderingContext2D, f: FigureSpec): void {
  const { model, view: v } = f;
  const W = v.width;
  const H = v.height + captionHeight(f.caption.length);
  ctx.save();
  const bg = f.background === undefined ? INK.background : f.background;
  if (bg !== null) {
    ctx.fillStyle = bg;
    ctx.fillRect(0, 0, W, H);
  }
  ctx.beginPath();
  ctx.rect(0, 0, W, v.height);
  ctx.clip();
  const sizes = figureStrokes(f);
  const gain = f.arrowScale ?? 1;
  const sc = (x: number, y: number) => toScreen(v, x, y);
  const frame = computeFrame(model, f.field, f.turns, f.field ? f.arrows : 'none', newFrame(model));
  ctx.lineCap = 'round';
  if (f.rest && f.field) {
    const rest = computeFrame(model, null, 0, 'none', newFrame(model));
    ctx.strokeStyle = INK.rest;
    ctx.lineWidth = Math.max(0.5, sizes.bar / 1.25);
    ctx.beginPath();
    for (let r = 0; r < model.m; r++) line(ctx, sc(rest.bars[4 * r], rest.bars[4 * r + 1]), sc(rest.bars[4 * r + 2], rest.bars[4 * r + 3]));
    ctx.stroke();
  }
  ctx.lineWidth = sizes.bar;
  for (let r = 0; r < model.m; r++) {
    ctx.strokeStyle = f.stress ? stressColour(f.stress[r]) : model.kinds[r] === BarKind.Wrapped ? INK.stub : INK.bar;
    ctx.beginPath();
    line(ctx, sc(frame.bars[4 * r], frame.bars[4 * r + 1]), sc(frame.bars[4 * r + 2], frame.bars[4 * r + 3]));
    ctx.stroke();
  }
  if (f.field && f.arrows !== 'none') {
    ctx.strokeStyle = INK.arrow;
    ctx.fillStyle = INK.arrow;
    ctx.lineWidth = sizes.arrow;
    for (let j = 0; j < model.n; j++) {
      const [x, y] = sc(frame.joints[2 * j], frame.joints[2 * j + 1]);
      arrow(ctx, x, y, frame.arrows[2 * j] * v.scale * gain, -frame.arrows[2 * j + 1] * v.scale * gain, sizes.arrow);
    }
  }
  const rel = f.field?.relative;
  ctx.lineWidth = 1;
  ctx.strokeStyle = INK.outline;
  for (let j = 0; j < model.n; j++) {
    const [x, y] = sc(frame.joints[2 * j], frame.joints[2 * j + 1]);
    ctx.fillStyle = rel && f.colour ? amplitudeColour(rel[j]) : INK.joint;
    ctx.beginPath();
    ctx.arc(x, y, sizes.joint - 0.5, 0, 2 * Math.PI);
    ctx.fill();
    ctx.stroke();
  }
  paintMarks(ctx, f);
  ctx.restore();
  if (f.legend) paintLegend(ctx, f.legend.kind, f.legend.title, W - 188, 12);
  ctx.fillStyle = INK.text;
  ctx.font = '12px system-ui, sans-serif';
  ctx.textBaseline = 'alphabetic';
  ctx.textAlign = 'left';
  f.caption.forEach((text, i) => ctx.fillText(text, 12, v.height + 4 + CAPTION_LINE * (i + 1), W - 24));
}

function line(ctx: CanvasRenderingContext2D, a: Vec, b: Vec): void {
  ctx.moveTo(a[0], a[1]);
  ctx.lineTo(b[0], b[1]);
}

export function arrow(ctx: CanvasRenderingContext2D, x: number, y: number, ax: number, ay: number, width: number): void {
  const len = Math.hypot(ax, ay);
  if (len < 1.5) return;
  const ux = ax / len;
  const uy = ay / len;
  const head = Math.min(len * 0.45, 3 + 3 * width);
  ctx.beginPath();
  ctx.moveTo(x, y);
  ctx.lineTo(x + ux * (len - head), y + uy * (len - head));
  ctx.stroke();
  ctx.beginPath();
  ctx.moveTo(x + ax, y + ay);
  ctx.lineTo(x + ux * (len - head) - uy * head * 0.5, y + uy * (len - head) + ux * head * 0.5);
  ctx.lineTo(x + ux * (len - head) + uy * head * 0.5, y + uy * (len - head) - ux * head * 0.5);
  ctx.closePath();
  ctx.fill();
}

function paintMarks(ctx: CanvasRenderingContext2D, f: FigureSpec): void {
  const v = f.view;
  const sc = (p: Vec) => toScreen(v, p[0], p[1]);
  for (const mark of f.model.marks) {
    if (mark.kind === 'ground-line') {
      const [x1, y1] = sc(mark.a);
      const [x2, y2] = sc(mark.b);
      const ox = mark.outward[0];
      const oy = -mark.outward[1];
      ctx.strokeStyle = INK.ground;
      ctx.lineWidth = 2;
      ctx.beginPath();
      line(ctx, [x1, y1], [x2, y2]);
      ctx.stroke();
      const len = Math.hypot(x2 - x1, y2 - y1) || 1;
      const tx = (x2 - x1) / len;
      const ty = (y2 - y1) / len;
      const steps = Math.max(2, Math.floor(len / 9));
      ctx.lineWidth = 1;
      ctx.beginPath();
      for (let i = 0; i <= steps; i++) {
        const px = x1 + ((x2 - x1) * i) / steps;
        const py = y1 + ((y2 - y1) * i) / steps;
        line(ctx, [px, py], [px + 7 * ox + 4 * tx, py + 7 * oy + 4 * ty]);
      }
      ctx.stroke();
    } else if (mark.kind === 'ground-end') {
      const [x, y] = sc(mark.at);
      ctx.fillStyle = INK.ground;
      ctx.fillRect(x - 2.5, y - 2.5, 5, 5);
    } else if (mark.kind === 'wrap-line') {
      const [x1, y1] = sc(mark.a);
      const [x2, y2] = sc(mark.b);
      ctx.strokeStyle = INK.marker;
      ctx.lineWidth = 1.2;
      ctx.setLineDash([5, 5]);
      ctx.beginPath();
      line(ctx, [x1, y1], [x2, y2]);
      ctx.stroke();
      ctx.setLineDash([]);
      const len = Math.hypot(x2 - x1, y2 - y1) || 1;
      const tx = (x2 - x1) / len;
      const ty = (y2 - y1) / len;
      const ox = mark.outward[0];
      const oy = -mark.outward[1];
      ctx.lineWidth = 1.6;
      ctx.beginPath();
      for (const t of [0.25, 0.75]) {
        const px = x1 + (x2 - x1) * t + ox * 4;
        const py = y1 + (y2 - y1) * t + oy * 4;
        ctx.moveTo(px - tx * 5, py - ty * 5);
        ctx.lineTo(px + ox * 6, py + oy * 6);
        ctx.lineTo(px + tx * 5, py + ty * 5);
      }
      ctx.stroke();
    } else if (mark.kind === 'label') {
      const p = labelPlacement(v, mark);
      ctx.save();
      ctx.translate(p.x, p.y);
      ctx.rotate(p.angle);
      ctx.fillStyle = INK.marker;
      ctx.font = '12px system-ui, sans-serif';
      ctx.textAlign = 'center';
      ctx.textBaseline = 'middle';
      ctx.fillText(mark.text, 0, 0);
      ctx.restore();
    }
  }
}

export function paintLegend(ctx: CanvasRenderingContext2D, kind: 'amplitude' | 'stress', title: string, x: number, y: number): void {
  const w = 170;
  const stops = kind === 'amplitude' ? AMPLITUDE_GRADIENT : STRESS_GRADIENT;
  ctx.fillStyle = 'rgba(251,250,247,0.92)';
  ctx.fillRect(x - 6, y - 4, w + 12, 44);
  const grad = ctx.createLinearGradient(x, 0, x + w, 0);
  stops.forEach((c, i) => grad.addColorStop(i / (stops.length - 1), c));
  ctx.fillStyle = INK.text;
  ctx.font = '11px system-ui, sans-serif';
  ctx.textAlign = 'left';
  ctx.textBaseline = 'top';
  ctx.fillText(title, x, y);
  ctx.fillStyle = grad;
  ctx.fillRect(x, y + 15, w, 9);
  ctx.fillStyle = INK.text;
  ctx.font = '10px system-ui, sans-serif';
  const [lo, hi] = kind === 'amplitude' ? ['0', 'max'] : ['compression', 'tension'];
  ctx.fillText(lo, x, y + 26);
  ctx.textAlign = 'right';
  ctx.fillText(hi, x + w, y + 26);
}

/** A canvas of the figure's full size (drawing plus caption), at `scale` device pixels per pixel. */
export function figureCanvas(f: FigureSpec, scale = 1): HTMLCanvasElement {
  const c = document.createElement('canvas');
  c.width = Math.round(f.view.width * scale);
  c.height = Math.round((f.view.height + captionHeight(f.caption.length)) * scale);
  const ctx = c.getContext('2d', { willReadFrequently: true })!;
  ctx.scale(scale, scale);
  paintFigure(ctx, f);
  return c;
}
