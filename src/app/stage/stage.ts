/**
 * The stage: the supercell drawn with pixi.js v8, pan and zoom, and the animation of the
 * selected flex p + ε·Re(e^{iφ} u).
 *
 * Drawing modes:
 *  - 'mesh' (default on WebGL): bars, joints and arrows are four batched meshes
 *    (batched.ts) placed by their vertex shaders from the rest positions and the mode; a frame
 *    sets only uniforms (phase, view, sizes), so animating uploads nothing.
 *  - 'graphics' (the fallback on other renderers, and for comparison): one Graphics object cleared
 *    and redrawn every frame, bars and joints grouped by colour.
 * Boundary marks (ground, wrap markers) are static and redrawn only when the view changes.
 * The host carries data-animating="true" while a flex moves.
 */
import { Application, Container, Graphics, RendererType, Text } from 'pixi.js';
import { BatchedMeshes, type FrameInput } from './batched.js';
import { amplitudeColour, hexToNumber, INK, stressColour } from './colours.js';
import {
  BarKind,
  computeFrame,
  labelPlacement,
  newFrame,
  strokeSizes,
  toScreen,
  toWorldPoint,
  viewFor,
  type ArrowMode,
  type Field,
  type Frame,
  type SceneModel,
  type Vec,
  type View,
} from './scene.js';

type Swatch = keyof typeof INK;

export type DrawMode = 'mesh' | 'graphics';

/**
 * Whether WebGL here is drawn in software (SwiftShader, llvmpipe): multisampling is costly
 * there, and the meshes smooth their own edges.
 */
function softwareWebGl(): boolean {
  try {
    const gl = document.createElement('canvas').getContext('webgl');
    if (!gl) return false;
    const info = gl.getExtension('WEBGL_debug_renderer_info');
    const name = String(gl.getParameter(info ? info.UNMASKED_RENDERER_WEBGL : gl.RENDERER));
    gl.getExtension('WEBGL_lose_context')?.loseContext();
    return /swiftshader|llvmpipe|softpipe|software/i.test(name);
  } catch {
    return false;
  }
}

export interface StageSettings {
  playing: boolean;
  speed: number;
  turns: number;
  arrows: ArrowMode;
  colour: boolean;
  rest: boolean;
  zoom: number;
  centre: Vec | null;
}

export interface StageStats {
  renderer: string;
  drawMode: DrawMode;
  /** Frames drawn in the last second. */
  fps: number;
  /** Mean CPU milliseconds per drawn frame (vertex update + render submit), last second. */
  frameMs: number;
  frames: number;
  bars: number;
  joints: number;
}

export class Stage {
  readonly host: HTMLElement;
  private app = new Application();
  private ok = false;
  private failure: string | null = null;
  private mode: DrawMode = 'mesh';
  private requestedMode: DrawMode | null;
  private world = new Container();
  private overlay = new Graphics();
  private labels = new Container();
  private gfx = new Graphics();
  private meshes: BatchedMeshes | null = null;

  private model: SceneModel | null = null;
  private frame: Frame | null = null;
  private restFrame: Frame | null = null;
  private field: Field | null = null;
  private stress: Float32Array | null = null;
  /** Bar widths (multiples of the bar width) of the self-stress drawn, or null. */
  private widths: Float32Array | null = null;
  private s: StageSettings = { playing: true, speed: 0.5, turns: 0, arrows: 'none', colour: true, rest: false, zoom: 1, centre: null };
  private dirty = true;
  private colourDirty = true;
  private fieldDirty = true;
  /** The view and stroke sizes, recomputed only when the view changes. */
  private cachedView: View | null = null;
  private cachedSizes = { bar: 1, joint: 1, arrow: 1 };
  private animating = false;
  /** Reused for every frame of the meshes. */
  private frameInput: FrameInput = { view: { scale: 1, cx: 0, cy: 0, width: 1, height: 1 }, sizes: { bar: 1, joint: 1, arrow: 1 }, turns: 0, field: null, arrows: 'none', rest: false };
  private overlayDirty = true;
  private width = 1;
  private height = 1;
  private last = 0;
  private raf = 0;
  private stat = { frames: 0, windowStart: 0, windowFrames: 0, windowMs: 0, fps: 0, frameMs: 0 };

  /** Called (at most every 100 ms while playing) with the current phase in turns. */
  onPhase: ((turns: number) => void) | null = null;
  /** Called when the user pans or zooms. */
  onViewChange: ((zoom: number, centre: Vec | null) => void) | null = null;
  private lastPhaseReport = 0;

  constructor(host: HTMLElement, mode: DrawMode | null = null) {
    this.host = host;
    this.requestedMode = mode;
  }

  async init(): Promise<void> {
    const r = this.host.getBoundingClientRect();
    this.width = Math.max(1, Math.floor(r.width));
    this.height = Math.max(1, Math.floor(r.height));
    try {
      await this.app.init({
        width: this.width,
        height: this.height,
        antialias: !softwareWebGl(),
        background: INK.background,
        resolution: Math.min(2, window.devicePixelRatio || 1),
        autoDensity: true,
        preference: 'webgl',
        autoStart: false,
      });
    } catch (e) {
      this.failure = `The drawing surface could not be started (${e instanceof Error ? e.message : String(e)}). Results and exports still work.`;
      throw new Error(this.failure);
    }
    this.ok = true;
    this.app.ticker.stop();
    const canvas = this.app.canvas as HTMLCanvasElement;
    canvas.setAttribute('data-testid', 'stage-canvas');
    canvas.setAttribute('aria-hidden', 'true');
    this.host.appendChild(canvas);
    // the meshes' shaders are written for WebGL; other renderers draw with Graphics
    const gl = this.app.renderer.type === RendererType.WEBGL;
    this.mode = gl ? (this.requestedMode ?? 'mesh') : 'graphics';
    this.app.stage.addChild(this.world, this.overlay, this.labels);
    this.world.addChild(this.gfx);
    this.bindPointer(canvas);
    new ResizeObserver(() => this.resize()).observe(this.host);
    this.host.dataset.animating = 'false';
    this.raf = requestAnimationFrame((t) => this.tick(t));
  }

  get available(): boolean {
    return this.ok;
  }
  get error(): string | null {
    return this.failure;
  }
  get rendererName(): string {
    if (!this.ok) return 'none';
    const t = this.app.renderer.type;
    return t === RendererType.WEBGL ? 'webgl' : t === RendererType.WEBGPU ? 'webgpu' : 'canvas';
  }

  stats(): StageStats {
    return {
      renderer: this.rendererName,
      drawMode: this.mode,
      fps: this.stat.fps,
      frameMs: this.stat.frameMs,
      frames: this.stat.frames,
      bars: this.model?.m ?? 0,
      joints: this.model?.n ?? 0,
    };
  }

  /** The current view (world → screen) in CSS pixels. */
  view(): View | null {
    if (!this.model) return null;
    if (!this.cachedView) {
      this.cachedView = viewFor(this.model, this.width, this.height, this.s.zoom, this.s.centre);
      this.cachedSizes = strokeSizes(this.model, this.cachedView);
    }
    return this.cachedView;
  }

  get size(): [number, number] {
    return [this.width, this.height];
  }

  setScene(model: SceneModel | null): void {
    this.model = model;
    this.frame = model ? newFrame(model) : null;
    this.restFrame = model ? computeFrame(model, null, 0, 'none', newFrame(model)) : null;
    this.field = null;
    this.stress = null;
    this.widths = null;
    this.cachedView = null;
    if (this.ok) this.buildMeshes();
    this.dirty = this.colourDirty = this.fieldDirty = this.overlayDirty = true;
  }

  setField(field: Field | null): void {
    this.field = field;
    this.stress = null;
    this.widths = null;
    this.dirty = this.colourDirty = this.fieldDirty = true;
  }

  /** A self-stress: bar colours from `values` in [−1, 1], and bar widths (multiples of the bar width) when given. */
  setStress(values: Float32Array | null, widths: Float32Array | null = null): void {
    this.stress = values;
    this.widths = values ? widths : null;
    this.field = null;
    this.dirty = this.colourDirty = this.fieldDirty = true;
  }

  /**
   * The bar widths as drawn now, for checks: the plain bar width in css px and each bar's
   * multiple of it (read back from the mesh buffer in mesh mode), or null without a scene.
   */
  drawnBarWidths(): { base: number; factors: Float32Array } | null {
    if (!this.model || !this.view()) return null;
    if (this.ok && this.mode === 'mesh' && this.meshes) {
      this.renderNow();
      return { base: this.cachedSizes.bar, factors: this.meshes.widths() };
    }
    return { base: this.cachedSizes.bar, factors: this.widths ? Float32Array.from(this.widths) : new Float32Array(this.model.m).fill(1) };
  }

  settings(): StageSettings {
    return { ...this.s, centre: this.s.centre ? [this.s.centre[0], this.s.centre[1]] : null };
  }

  update(p: Partial<StageSettings>): void {
    const before = this.s;
    this.s = { ...this.s, ...p };
    if (p.colour !== undefined && p.colour !== before.colour) this.colourDirty = true;
    if (p.zoom !== undefined || p.centre !== undefined) {
      this.overlayDirty = true;
      this.cachedView = null;
    }
    this.dirty = true;
  }

  /** Advance the phase by one step (1/32 of a period). */
  step(direction = 1): void {
    this.s.turns = (((this.s.turns + direction / 32) % 1) + 1) % 1;
    this.dirty = true;
    this.onPhase?.(this.s.turns);
  }

  fit(): void {
    this.update({ zoom: 1, centre: null });
    this.onViewChange?.(1, null);
  }

  zoomBy(factor: number, sx = this.width / 2, sy = this.height / 2): void {
    const v = this.view();
    if (!v) return;
    const w = toWorldPoint(v, sx, sy);
    const zoom = Math.min(200, Math.max(0.02, this.s.zoom * factor));
    const k = v.scale * (zoom / this.s.zoom);
    const centre: Vec = [w[0] - (sx - this.width / 2) / k, w[1] + (sy - this.height / 2) / k];
    this.update({ zoom, centre });
    this.onViewChange?.(zoom, centre);
  }

  destroy(): void {
    cancelAnimationFrame(this.raf);
    if (this.ok) this.app.destroy(true);
  }

  // -------------------------------------------------------------------------------------------

  private resize(): void {
    const r = this.host.getBoundingClientRect();
    const w = Math.max(1, Math.floor(r.width));
    const h = Math.max(1, Math.floor(r.height));
    if (w === this.width && h === this.height) return;
    this.width = w;
    this.height = h;
    this.app.renderer.resize(w, h);
    this.cachedView = null;
    this.dirty = this.overlayDirty = true;
  }

  private bindPointer(canvas: HTMLCanvasElement): void {
    let drag: { x: number; y: number; centre: Vec; scale: number } | null = null;
    canvas.addEventListener('wheel', (e) => {
      e.preventDefault();
      const r = canvas.getBoundingClientRect();
      this.zoomBy(Math.exp(-e.deltaY * 0.0015), e.clientX - r.left, e.clientY - r.top);
    }, { passive: false });
    canvas.addEventListener('pointerdown', (e) => {
      const v = this.view();
      if (!v) return;
      canvas.setPointerCapture(e.pointerId);
      drag = { x: e.clientX, y: e.clientY, centre: [v.cx, v.cy], scale: v.scale };
      canvas.style.cursor = 'grabbing';
    });
    canvas.addEventListener('pointermove', (e) => {
      if (!drag) return;
      const centre: Vec = [drag.centre[0] - (e.clientX - drag.x) / drag.scale, drag.centre[1] + (e.clientY - drag.y) / drag.scale];
      this.update({ centre });
    });
    const end = () => {
      if (!drag) return;
      drag = null;
      canvas.style.cursor = '';
      this.onViewChange?.(this.s.zoom, this.s.centre);
    };
    canvas.addEventListener('pointerup', end);
    canvas.addEventListener('pointercancel', end);
    canvas.addEventListener('dblclick', () => this.fit());
  }

  private tick(t: number): void {
    this.raf = requestAnimationFrame((x) => this.tick(x));
    const dt = this.last ? Math.min(0.1, (t - this.last) / 1000) : 0;
    this.last = t;
    const moving = this.s.playing && this.model !== null && this.field !== null && this.s.speed !== 0;
    if (moving !== this.animating) {
      this.animating = moving;
      this.host.dataset.animating = String(moving);
    }
    if (moving) {
      this.s.turns = (this.s.turns + this.s.speed * dt) % 1;
      this.dirty = true;
      if (t - this.lastPhaseReport > 100) {
        this.lastPhaseReport = t;
        this.onPhase?.(this.s.turns);
      }
    }
    if (!this.dirty) return;
    const t0 = performance.now();
    this.draw();
    this.app.render();
    const ms = performance.now() - t0;
    this.dirty = false;
    const st = this.stat;
    st.frames++;
    st.windowFrames++;
    st.windowMs += ms;
    if (t - st.windowStart >= 1000) {
      st.fps = (st.windowFrames * 1000) / (t - st.windowStart || 1000);
      st.frameMs = st.windowMs / Math.max(1, st.windowFrames);
      st.windowStart = t;
      st.windowFrames = 0;
      st.windowMs = 0;
    }
  }

  /** Draw the current state at once (used before exports and screenshots). */
  renderNow(): void {
    if (!this.ok) return;
    this.draw();
    this.app.render();
    this.dirty = false;
  }

  private draw(): void {
    const model = this.model;
    const v = this.view();
    if (!model || !v || !this.frame) {
      this.gfx.clear();
      this.overlay.clear();
      this.labels.removeChildren().forEach((c) => c.destroy());
      this.meshes?.hide();
      return;
    }
    if (this.overlayDirty) {
      this.drawOverlay(model, v);
      this.overlayDirty = false;
    }
    if (this.mode === 'mesh' && this.meshes) this.drawMeshes(v);
    else {
      computeFrame(model, this.field, this.s.turns, this.field ? this.s.arrows : 'none', this.frame);
      this.drawGraphics(model, v);
    }
  }

  // ---- mesh mode ------------------------------------------------------------------------------

  private buildMeshes(): void {
    this.meshes?.destroy();
    this.meshes = null;
    if (!this.model || this.mode !== 'mesh') return;
    this.meshes = new BatchedMeshes(this.model, this.world);
  }

  private drawMeshes(v: View): void {
    const m = this.meshes!;
    this.gfx.clear();
    if (this.fieldDirty) {
      m.setField(this.field);
      this.fieldDirty = false;
    }
    if (this.colourDirty) {
      m.setColours(this.stress, this.field && this.s.colour ? this.field.relative : null);
      m.setWidths(this.stress ? this.widths : null);
      this.colourDirty = false;
    }
    const f = this.frameInput;
    f.view = v;
    f.sizes = this.cachedSizes;
    f.turns = this.s.turns;
    f.field = this.field;
    f.arrows = this.s.arrows;
    f.rest = this.s.rest;
    m.frame(f);
  }

  // ---- graphics mode ----------------------------------------------------------------------

  private drawGraphics(model: SceneModel, v: View): void {
    const g = this.gfx;
    g.clear();
    const sizes = strokeSizes(model, v);
    const F = this.frame!;
    const sc = (x: number, y: number) => toScreen(v, x, y);
    if (this.s.rest && this.field) {
      const restFrame = this.restFrame!;
      for (let r = 0; r < model.m; r++) {
        const [x1, y1] = sc(restFrame.bars[4 * r], restFrame.bars[4 * r + 1]);
        const [x2, y2] = sc(restFrame.bars[4 * r + 2], restFrame.bars[4 * r + 3]);
        g.moveTo(x1, y1).lineTo(x2, y2);
      }
      g.stroke({ width: Math.max(0.5, sizes.bar / 1.25), color: hexToNumber(INK.rest) });
    }
    // bars grouped by colour and width (widths in steps of 1/8 of the bar width)
    const groups = new Map<string, number[]>();
    for (let r = 0; r < model.m; r++) {
      const colour = this.stress ? stressColour(Math.round(this.stress[r] * 8) / 8) : model.kinds[r] === BarKind.Wrapped ? INK.stub : INK.bar;
      const width = this.stress && this.widths ? Math.round(this.widths[r] * 8) / 8 : 1;
      const key = `${colour} ${width}`;
      let list = groups.get(key);
      if (!list) groups.set(key, (list = []));
      list.push(r);
    }
    for (const [key, list] of groups) {
      const [colour, width] = key.split(' ');
      for (const r of list) {
        const [x1, y1] = sc(F.bars[4 * r], F.bars[4 * r + 1]);
        const [x2, y2] = sc(F.bars[4 * r + 2], F.bars[4 * r + 3]);
        g.moveTo(x1, y1).lineTo(x2, y2);
      }
      g.stroke({ width: sizes.bar * Number(width), color: hexToNumber(colour) });
    }
    if (this.field && this.s.arrows !== 'none') {
      for (let j = 0; j < model.n; j++) {
        const [x, y] = sc(F.joints[2 * j], F.joints[2 * j + 1]);
        const ax = F.arrows[2 * j] * v.scale;
        const ay = -F.arrows[2 * j + 1] * v.scale;
        if (Math.hypot(ax, ay) < 1.5) continue;
        g.moveTo(x, y).lineTo(x + ax, y + ay);
      }
      g.stroke({ width: sizes.arrow, color: hexToNumber(INK.arrow) });
    }
    const jg = new Map<string, number[]>();
    const rel = this.field?.relative;
    for (let j = 0; j < model.n; j++) {
      const colour = rel && this.s.colour ? amplitudeColour(Math.round(rel[j] * 16) / 16) : INK.joint;
      let list = jg.get(colour);
      if (!list) jg.set(colour, (list = []));
      list.push(j);
    }
    for (const [colour, list] of jg) {
      for (const j of list) {
        const [x, y] = sc(F.joints[2 * j], F.joints[2 * j + 1]);
        g.circle(x, y, sizes.joint);
      }
      g.fill({ color: hexToNumber(colour) });
      g.stroke({ width: 1, color: hexToNumber(INK.outline) });
    }
  }

  // ---- boundary marks -------------------------------------------------------------------------

  private drawOverlay(model: SceneModel, v: View): void {
    const g = this.overlay;
    g.clear();
    this.labels.removeChildren().forEach((c) => c.destroy());
    const sc = (p: Vec) => toScreen(v, p[0], p[1]);
    const colour = (s: Swatch) => hexToNumber(INK[s]);
    for (const mark of model.marks) {
      if (mark.kind === 'ground-line') {
        const [x1, y1] = sc(mark.a);
        const [x2, y2] = sc(mark.b);
        const ox = mark.outward[0];
        const oy = -mark.outward[1];
        g.moveTo(x1, y1).lineTo(x2, y2).stroke({ width: 2, color: colour('ground') });
        const len = Math.hypot(x2 - x1, y2 - y1);
        const steps = Math.max(2, Math.floor(len / 9));
        const tx = (x2 - x1) / len;
        const ty = (y2 - y1) / len;
        for (let i = 0; i <= steps; i++) {
          const px = x1 + ((x2 - x1) * i) / steps;
          const py = y1 + ((y2 - y1) * i) / steps;
          g.moveTo(px, py).lineTo(px + 7 * ox + 4 * tx, py + 7 * oy + 4 * ty);
        }
        g.stroke({ width: 1, color: colour('ground') });
      } else if (mark.kind === 'ground-end') {
        const [x, y] = sc(mark.at);
        g.rect(x - 2.5, y - 2.5, 5, 5).fill({ color: colour('ground') });
      } else if (mark.kind === 'wrap-line') {
        const [x1, y1] = sc(mark.a);
        const [x2, y2] = sc(mark.b);
        const len = Math.hypot(x2 - x1, y2 - y1) || 1;
        const tx = (x2 - x1) / len;
        const ty = (y2 - y1) / len;
        for (let d = 0; d < len; d += 10) {
          const e = Math.min(len, d + 5);
          g.moveTo(x1 + tx * d, y1 + ty * d).lineTo(x1 + tx * e, y1 + ty * e);
        }
        g.stroke({ width: 1.2, color: colour('marker') });
        // chevrons pointing outward at a quarter and three quarters of the side
        const ox = mark.outward[0];
        const oy = -mark.outward[1];
        for (const f of [0.25, 0.75]) {
          const px = x1 + (x2 - x1) * f + ox * 4;
          const py = y1 + (y2 - y1) * f + oy * 4;
          g.moveTo(px - tx * 5, py - ty * 5).lineTo(px + ox * 6, py + oy * 6).lineTo(px + tx * 5, py + ty * 5);
        }
        g.stroke({ width: 1.6, color: colour('marker') });
      } else if (mark.kind === 'label') {
        const p = labelPlacement(v, mark);
        const t = new Text({ text: mark.text, style: { fontFamily: 'system-ui, sans-serif', fontSize: 12, fill: INK.marker } });
        t.anchor.set(0.5, 0.5);
        t.position.set(p.x, p.y);
        t.rotation = p.angle;
        this.labels.addChild(t);
      }
    }
  }
}
