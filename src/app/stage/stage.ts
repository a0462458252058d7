/**
 * The stage: the supercell drawn with pixi.js v8, pan and zoom, and the animation of the
 * selected flex p + ε·Re(e^{iφ} u).
 *
 * Drawing modes:
 *  - 'mesh' (default on WebGL/WebGPU): bars, joints and arrows are three pre-built meshes whose
 *    vertex buffers are rewritten each frame (screen-space quads and polygons, so line widths
 *    and joint sizes stay constant in pixels); colours come from a small palette texture
 *    through the UVs, so one mesh holds every colour.
 *  - 'graphics' (the canvas-renderer fallback, and for comparison): one Graphics object cleared
 *    and redrawn every frame, bars and joints grouped by colour.
 * Boundary marks (ground, wrap markers) are static and redrawn only when the view changes.
 */
import { Application, Container, Graphics, MeshSimple, RendererType, Text, Texture } from 'pixi.js';
import { amplitudeColour, hexToNumber, INK, stressColour } from './colours.js';
import { gradientU, paletteCanvas, rowV, swatchUV, type Swatch } from './palette.js';
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

export type DrawMode = 'mesh' | 'graphics';

const K = 10; // sides of a joint polygon
const COS = Float64Array.from({ length: K }, (_, i) => Math.cos((2 * Math.PI * i) / K));
const SIN = Float64Array.from({ length: K }, (_, i) => Math.sin((2 * Math.PI * i) / K));

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

interface Meshes {
  bars: MeshSimple;
  rest: MeshSimple;
  joints: MeshSimple;
  arrows: MeshSimple;
}

export class Stage {
  readonly host: HTMLElement;
  private app = new Application();
  private ok = false;
  private failure: string | null = null;
  private mode: DrawMode = 'mesh';
  private requestedMode: DrawMode | null;
  private texture: Texture | null = null;
  private world = new Container();
  private overlay = new Graphics();
  private labels = new Container();
  private gfx = new Graphics();
  private meshes: Meshes | null = null;

  private model: SceneModel | null = null;
  private frame: Frame | null = null;
  private restFrame: Frame | null = null;
  private field: Field | null = null;
  private stress: Float32Array | null = null;
  private s: StageSettings = { playing: true, speed: 0.5, turns: 0, arrows: 'none', colour: true, rest: false, zoom: 1, centre: null };
  private dirty = true;
  private colourDirty = true;
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
        antialias: true,
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
    const gpu = this.app.renderer.type === RendererType.WEBGL || this.app.renderer.type === RendererType.WEBGPU;
    this.mode = this.requestedMode ?? (gpu ? 'mesh' : 'graphics');
    if (!gpu) this.mode = 'graphics';
    this.texture = Texture.from(paletteCanvas());
    this.texture.source.scaleMode = 'nearest';
    this.app.stage.addChild(this.world, this.overlay, this.labels);
    this.world.addChild(this.gfx);
    this.bindPointer(canvas);
    new ResizeObserver(() => this.resize()).observe(this.host);
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
    return viewFor(this.model, this.width, this.height, this.s.zoom, this.s.centre);
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
    if (this.ok) this.buildMeshes();
    this.dirty = this.colourDirty = this.overlayDirty = true;
  }

  setField(field: Field | null): void {
    this.field = field;
    this.stress = null;
    this.dirty = this.colourDirty = true;
  }

  setStress(values: Float32Array | null): void {
    this.stress = values;
    this.field = null;
    this.dirty = this.colourDirty = true;
  }

  settings(): StageSettings {
    return { ...this.s, centre: this.s.centre ? [this.s.centre[0], this.s.centre[1]] : null };
  }

  update(p: Partial<StageSettings>): void {
    const before = this.s;
    this.s = { ...this.s, ...p };
    if (p.colour !== undefined && p.colour !== before.colour) this.colourDirty = true;
    if (p.zoom !== undefined || p.centre !== undefined) this.overlayDirty = true;
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
    if (this.s.playing && this.model && this.field) {
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
      if (this.meshes) for (const m of Object.values(this.meshes)) m.visible = false;
      return;
    }
    computeFrame(model, this.field, this.s.turns, this.field ? this.s.arrows : 'none', this.frame);
    if (this.overlayDirty) {
      this.drawOverlay(model, v);
      this.overlayDirty = false;
    }
    if (this.mode === 'mesh' && this.meshes) this.drawMeshes(model, v);
    else this.drawGraphics(model, v);
  }

  // ---- mesh mode ------------------------------------------------------------------------------

  private buildMeshes(): void {
    if (this.meshes) {
      for (const m of Object.values(this.meshes)) m.destroy();
      this.meshes = null;
    }
    const model = this.model;
    if (!model || this.mode !== 'mesh' || !this.texture) return;
    const quads = (count: number) => {
      const idx = new Uint32Array(6 * count);
      for (let i = 0; i < count; i++) idx.set([4 * i, 4 * i + 1, 4 * i + 2, 4 * i, 4 * i + 2, 4 * i + 3], 6 * i);
      return new MeshSimple({ texture: this.texture!, vertices: new Float32Array(8 * count), uvs: new Float32Array(8 * count), indices: idx });
    };
    const n = model.n;
    // joints: outline polygon then fill polygon, each a fan of K triangles around a centre
    const per = 2 * (K + 1);
    const jIdx = new Uint32Array(n * 2 * 3 * K);
    let q = 0;
    for (let k = 0; k < n; k++) {
      for (let ring = 0; ring < 2; ring++) {
        const c = k * per + ring * (K + 1);
        for (let i = 0; i < K; i++) {
          jIdx[q++] = c;
          jIdx[q++] = c + 1 + i;
          jIdx[q++] = c + 1 + ((i + 1) % K);
        }
      }
    }
    const joints = new MeshSimple({ texture: this.texture, vertices: new Float32Array(2 * per * n), uvs: new Float32Array(2 * per * n), indices: jIdx });
    // arrows: a shaft quad and a head triangle per joint
    const aIdx = new Uint32Array(9 * n);
    for (let k = 0; k < n; k++) {
      const b = 7 * k;
      aIdx.set([b, b + 1, b + 2, b, b + 2, b + 3, b + 4, b + 5, b + 6], 9 * k);
    }
    const arrowUV = new Float32Array(14 * n);
    const [au, av] = swatchUV('arrow');
    for (let i = 0; i < 7 * n; i++) {
      arrowUV[2 * i] = au;
      arrowUV[2 * i + 1] = av;
    }
    const arrows = new MeshSimple({ texture: this.texture, vertices: new Float32Array(14 * n), uvs: arrowUV, indices: aIdx });
    const bars = quads(model.m);
    const rest = quads(model.m);
    const restUV = rest.geometry.uvs as Float32Array;
    const [ru, rv] = swatchUV('rest');
    for (let i = 0; i < 4 * model.m; i++) {
      restUV[2 * i] = ru;
      restUV[2 * i + 1] = rv;
    }
    rest.geometry.getBuffer('aUV').update();
    this.meshes = { rest, bars, joints, arrows };
    this.world.addChild(rest, bars, arrows, joints);
  }

  private writeColours(model: SceneModel): void {
    const m = this.meshes!;
    const bu = m.bars.geometry.uvs as Float32Array;
    const setQuad = (arr: Float32Array, i: number, u: number, v: number) => {
      for (let j = 0; j < 4; j++) {
        arr[8 * i + 2 * j] = u;
        arr[8 * i + 2 * j + 1] = v;
      }
    };
    const [bu0, bv0] = swatchUV('bar');
    const [su0, sv0] = swatchUV('stub');
    for (let r = 0; r < model.m; r++) {
      if (this.stress) setQuad(bu, r, gradientU((this.stress[r] + 1) / 2), rowV(1));
      else if (model.kinds[r] === BarKind.Wrapped) setQuad(bu, r, su0, sv0);
      else setQuad(bu, r, bu0, bv0);
    }
    m.bars.geometry.getBuffer('aUV').update();
    const ju = m.joints.geometry.uvs as Float32Array;
    const per = 2 * (K + 1);
    const [ou, ov] = swatchUV('outline');
    const [pu, pv] = swatchUV('joint');
    const rel = this.field?.relative;
    for (let k = 0; k < model.n; k++) {
      const base = k * per;
      let fu = pu;
      let fv = pv;
      if (rel && this.s.colour) {
        fu = gradientU(rel[k]);
        fv = rowV(0);
      }
      for (let i = 0; i < K + 1; i++) {
        ju[2 * (base + i)] = ou;
        ju[2 * (base + i) + 1] = ov;
        ju[2 * (base + K + 1 + i)] = fu;
        ju[2 * (base + K + 1 + i) + 1] = fv;
      }
    }
    m.joints.geometry.getBuffer('aUV').update();
  }

  private drawMeshes(model: SceneModel, v: View): void {
    const m = this.meshes!;
    for (const mesh of Object.values(m)) mesh.visible = true;
    this.gfx.clear();
    if (this.colourDirty) {
      this.writeColours(model);
      this.colourDirty = false;
    }
    const sizes = strokeSizes(model, v);
    const W2 = v.width / 2;
    const H2 = v.height / 2;
    const k = v.scale;
    const cx = v.cx;
    const cy = v.cy;
    const F = this.frame!;
    const writeBars = (target: Float32Array, ends: Float64Array, hw: number) => {
      for (let r = 0; r < model.m; r++) {
        const x1 = W2 + (ends[4 * r] - cx) * k;
        const y1 = H2 - (ends[4 * r + 1] - cy) * k;
        const x2 = W2 + (ends[4 * r + 2] - cx) * k;
        const y2 = H2 - (ends[4 * r + 3] - cy) * k;
        const dx = x2 - x1;
        const dy = y2 - y1;
        const len = Math.hypot(dx, dy) || 1;
        const nx = (-dy / len) * hw;
        const ny = (dx / len) * hw;
        const o = 8 * r;
        target[o] = x1 + nx;
        target[o + 1] = y1 + ny;
        target[o + 2] = x1 - nx;
        target[o + 3] = y1 - ny;
        target[o + 4] = x2 - nx;
        target[o + 5] = y2 - ny;
        target[o + 6] = x2 + nx;
        target[o + 7] = y2 + ny;
      }
    };
    writeBars(m.bars.vertices as Float32Array, F.bars, sizes.bar / 2);
    m.rest.visible = this.s.rest && this.field !== null;
    if (m.rest.visible) writeBars(m.rest.vertices as Float32Array, this.restFrame!.bars, Math.max(0.5, sizes.bar / 2.5));
    const jv = m.joints.vertices as Float32Array;
    const per = 2 * (K + 1);
    const r0 = sizes.joint;
    const r1 = Math.max(0.6, r0 - 1.1);
    for (let j = 0; j < model.n; j++) {
      const x = W2 + (F.joints[2 * j] - cx) * k;
      const y = H2 - (F.joints[2 * j + 1] - cy) * k;
      const base = 2 * j * per;
      jv[base] = x;
      jv[base + 1] = y;
      const b2 = base + 2 * (K + 1);
      jv[b2] = x;
      jv[b2 + 1] = y;
      for (let i = 0; i < K; i++) {
        jv[base + 2 + 2 * i] = x + r0 * COS[i];
        jv[base + 3 + 2 * i] = y + r0 * SIN[i];
        jv[b2 + 2 + 2 * i] = x + r1 * COS[i];
        jv[b2 + 3 + 2 * i] = y + r1 * SIN[i];
      }
    }
    const showArrows = this.field !== null && this.s.arrows !== 'none';
    m.arrows.visible = showArrows;
    if (showArrows) {
      const av = m.arrows.vertices as Float32Array;
      const hw = sizes.arrow / 2;
      for (let j = 0; j < model.n; j++) {
        const x = W2 + (F.joints[2 * j] - cx) * k;
        const y = H2 - (F.joints[2 * j + 1] - cy) * k;
        const ax = F.arrows[2 * j] * k;
        const ay = -F.arrows[2 * j + 1] * k;
        const len = Math.hypot(ax, ay);
        const o = 14 * j;
        if (len < 1.5) {
          av.fill(x, o, o + 14);
          for (let i = 0; i < 7; i++) av[o + 2 * i + 1] = y;
          continue;
        }
        const ux = ax / len;
        const uy = ay / len;
        const head = Math.min(len * 0.45, 3 + 3 * sizes.arrow);
        const sx = x + ux * (len - head);
        const sy = y + uy * (len - head);
        const nx = -uy;
        const ny = ux;
        av[o] = x + nx * hw;
        av[o + 1] = y + ny * hw;
        av[o + 2] = x - nx * hw;
        av[o + 3] = y - ny * hw;
        av[o + 4] = sx - nx * hw;
        av[o + 5] = sy - ny * hw;
        av[o + 6] = sx + nx * hw;
        av[o + 7] = sy + ny * hw;
        const hwid = head * 0.5;
        av[o + 8] = sx + nx * hwid;
        av[o + 9] = sy + ny * hwid;
        av[o + 10] = sx - nx * hwid;
        av[o + 11] = sy - ny * hwid;
        av[o + 12] = x + ux * len;
        av[o + 13] = y + uy * len;
      }
    }
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
    // bars grouped by colour
    const groups = new Map<string, number[]>();
    for (let r = 0; r < model.m; r++) {
      const colour = this.stress ? stressColour(Math.round(this.stress[r] * 8) / 8) : model.kinds[r] === BarKind.Wrapped ? INK.stub : INK.bar;
      let list = groups.get(colour);
      if (!list) groups.set(colour, (list = []));
      list.push(r);
    }
    for (const [colour, list] of groups) {
      for (const r of list) {
        const [x1, y1] = sc(F.bars[4 * r], F.bars[4 * r + 1]);
        const [x2, y2] = sc(F.bars[4 * r + 2], F.bars[4 * r + 3]);
        g.moveTo(x1, y1).lineTo(x2, y2);
      }
      g.stroke({ width: sizes.bar, color: hexToNumber(colour) });
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
