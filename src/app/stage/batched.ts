/**
 * The stage's batched meshes: every bar, joint and arrow of the supercell in four meshes (rest
 * bars, bars, arrows, joints) whose vertex shaders place them. The buffers hold the rest
 * positions and the mode u (per vertex, with the far end of a wrapped bar already multiplied by
 * the bar's phase); they are written when the scene, the flex or the colours change. A frame
 * sets only uniforms: cos φ, sin φ, ε, the view and the stroke sizes, so animating uploads
 * nothing and creates no objects.
 *
 * Shapes are screen-space quads (widths and radii in pixels, as in the exports); bars and
 * joints fade their edges over one pixel in the fragment shader, so they look smooth without
 * multisampling.
 */
import { Geometry, Mesh, Shader, UniformGroup, type Container } from 'pixi.js';
import { amplitudeColour, INK, stressColour } from './colours.js';
import { BarKind, type ArrowMode, type Field, type SceneModel, type View } from './scene.js';

/** Shared head of the vertex shaders: a point p + ε·(cos φ·Re u − sin φ·Im u) → clip space. */
const PLACE = `
uniform vec4 uMotion; // cos φ, sin φ, ε (world units per unit of stored u), arrow gain (same units)
uniform vec4 uView;   // pixels per world unit, view centre x and y (relative to the origin), 0
uniform vec4 uSize;   // bar half width, joint radius, arrow half width (pixels), 1 = displacement arrows
uniform vec2 uHalf;   // half the stage size in pixels

vec2 place(vec2 p, vec4 u) {
  vec2 w = p + uMotion.z * (uMotion.x * u.xy - uMotion.y * u.zw);
  return vec2(uHalf.x + (w.x - uView.y) * uView.x, uHalf.y - (w.y - uView.z) * uView.x);
}
// pixels (y down) → clip space; the meshes sit untransformed on the screen
vec4 clip(vec2 px) {
  return vec4(px.x / uHalf.x - 1.0, 1.0 - px.y / uHalf.y, 0.0, 1.0);
}
`;

const BAR_VERTEX = `
in vec4 aEnds;   // rest positions of both ends
in vec4 aUa;     // u at the first end: Re x, Re y, Im x, Im y
in vec4 aUb;     // u at the second end
in vec2 aCorner; // which end (0, 1), which side (−1, 1)
in vec3 aColor;
in float aWidth; // this bar's width as a multiple of the bar width (self-stress drawings), else 1
out vec3 vColor;
out float vAcross;
out float vHalf;
${PLACE}
void main() {
  vec2 a = place(aEnds.xy, aUa);
  vec2 b = place(aEnds.zw, aUb);
  vec2 d = b - a;
  float len = length(d);
  vec2 n = len > 0.0 ? vec2(-d.y, d.x) / len : vec2(0.0, 1.0);
  vHalf = uSize.x * aWidth;
  float hw = vHalf + 1.0;
  vAcross = aCorner.y * hw;
  vColor = aColor;
  gl_Position = clip(mix(a, b, aCorner.x) + n * vAcross);
}
`;

const BAR_FRAGMENT = `
in vec3 vColor;
in float vAcross;
in float vHalf;
uniform vec4 uInk; // a fixed colour, used when its alpha is 1
out vec4 finalColor;
void main() {
  float a = clamp(vHalf + 0.5 - abs(vAcross), 0.0, 1.0);
  vec3 c = mix(vColor, uInk.rgb, uInk.a);
  finalColor = vec4(c * a, a);
}
`;

const JOINT_VERTEX = `
in vec2 aP;
in vec4 aU;
in vec2 aCorner; // (±1, ±1)
in vec3 aColor;
out vec3 vColor;
out vec2 vLocal;
${PLACE}
void main() {
  vLocal = aCorner * (uSize.y + 1.0);
  vColor = aColor;
  gl_Position = clip(place(aP, aU) + vLocal);
}
`;

const JOINT_FRAGMENT = `
in vec3 vColor;
in vec2 vLocal;
uniform highp vec4 uSize;
uniform vec4 uInk; // the outline colour
out vec4 finalColor;
void main() {
  float d = length(vLocal);
  float r0 = uSize.y;
  float r1 = max(0.6, r0 - 1.1);
  float a = clamp(r0 + 0.5 - d, 0.0, 1.0);
  vec3 c = mix(vColor, uInk.rgb, clamp(d - r1 + 0.5, 0.0, 1.0));
  finalColor = vec4(c * a, a);
}
`;

const ARROW_VERTEX = `
in vec2 aP;
in vec4 aU;
in vec3 aCorner; // along (0 tail, 1 shaft end, 2 tip), side (−1, 0, 1), 1 = head
${PLACE}
void main() {
  float c = uMotion.x;
  float s = uMotion.y;
  // displacement Re(e^{iφ} u); velocity d/dφ of it = −sin φ·Re u − cos φ·Im u
  vec2 v = uSize.w > 0.5 ? c * aU.xy - s * aU.zw : -s * aU.xy - c * aU.zw;
  v *= uMotion.w * uView.x;
  v.y = -v.y;
  float len = length(v);
  if (len < 1.5) {
    gl_Position = vec4(2.0, 2.0, 0.0, 1.0);
    return;
  }
  vec2 dir = v / len;
  vec2 n = vec2(-dir.y, dir.x);
  float head = min(len * 0.45, 3.0 + 6.0 * uSize.z);
  float along = aCorner.x < 0.5 ? 0.0 : aCorner.x < 1.5 ? len - head : len;
  float off = aCorner.z > 0.5 ? 0.5 * head : uSize.z;
  gl_Position = clip(place(aP, aU) + dir * along + n * aCorner.y * off);
}
`;

const ARROW_FRAGMENT = `
uniform vec4 uInk;
out vec4 finalColor;
void main() {
  finalColor = vec4(uInk.rgb, 1.0);
}
`;

type Rgb = [number, number, number];

function rgb(hex: string): Rgb {
  const v = parseInt(hex.slice(1), 16);
  return [((v >> 16) & 255) / 255, ((v >> 8) & 255) / 255, (v & 255) / 255];
}

/** A colour map sampled at 256 steps (built once; a lookup per bar or joint when colours change). */
function table(f: (t: number) => string): Float32Array {
  const out = new Float32Array(3 * 256);
  for (let i = 0; i < 256; i++) out.set(rgb(f(i / 255)), 3 * i);
  return out;
}
let AMPLITUDE: Float32Array | null = null;
let STRESS: Float32Array | null = null;

function quadIndices(count: number, perShape: number, pattern: readonly number[]): Uint32Array {
  const idx = new Uint32Array(pattern.length * count);
  for (let i = 0; i < count; i++) for (let j = 0; j < pattern.length; j++) idx[pattern.length * i + j] = perShape * i + pattern[j];
  return idx;
}
const QUAD = [0, 1, 2, 0, 2, 3];
// shaft quad (0–3) and head triangle (4–6)
const ARROW = [0, 1, 2, 0, 2, 3, 4, 5, 6];
const ARROW_CORNERS = [0, 1, 0, 0, -1, 0, 1, -1, 0, 1, 1, 0, 1, 1, 1, 1, -1, 1, 2, 0, 1];

interface Part {
  mesh: Mesh<Geometry, Shader>;
  uniforms: UniformGroup;
}

function part(geometry: Geometry, vertex: string, fragment: string, ink: string, override: boolean): Part {
  const [r, g, b] = rgb(ink);
  const uniforms = new UniformGroup({
    uMotion: { value: new Float32Array(4), type: 'vec4<f32>' },
    uView: { value: new Float32Array(4), type: 'vec4<f32>' },
    uSize: { value: new Float32Array(4), type: 'vec4<f32>' },
    uHalf: { value: new Float32Array(2), type: 'vec2<f32>' },
    uInk: { value: new Float32Array([r, g, b, override ? 1 : 0]), type: 'vec4<f32>' },
  });
  const shader = Shader.from({ gl: { vertex, fragment }, resources: { stageUniforms: uniforms } });
  return { mesh: new Mesh({ geometry, shader }), uniforms };
}

export interface FrameInput {
  view: View;
  sizes: { bar: number; joint: number; arrow: number };
  turns: number;
  field: Field | null;
  arrows: ArrowMode;
  rest: boolean;
}

export class BatchedMeshes {
  private readonly model: SceneModel;
  /** World origin subtracted before storing positions as 32-bit floats. */
  private readonly ox: number;
  private readonly oy: number;
  private readonly rest: Part;
  private readonly bars: Part;
  private readonly arrows: Part;
  private readonly joints: Part;
  private readonly parts: Part[];
  /** u scale: stored u = u / maxAbs, so ε in the shader is field.eps · maxAbs. */
  private uScale = 1;

  constructor(model: SceneModel, parent: Container) {
    this.model = model;
    const { n, m } = model;
    const g = model.geom;
    const P = g.positions;
    this.ox = (model.bounds.minX + model.bounds.maxX) / 2;
    this.oy = (model.bounds.minY + model.bounds.maxY) / 2;
    const ox = this.ox;
    const oy = this.oy;

    // bars: 4 vertices each; rest positions of both ends repeated per vertex
    const ends = new Float32Array(16 * m);
    const barCorner = new Float32Array(8 * m);
    for (let r = 0; r < m; r++) {
      const a = g.barA[r];
      const b = g.barB[r];
      const vx = g.barVector[2 * r];
      const vy = g.barVector[2 * r + 1];
      let ax: number, ay: number, bx: number, by: number;
      if (model.kinds[r] === BarKind.GroundFrom) {
        [ax, ay, bx, by] = [P[2 * b] - vx, P[2 * b + 1] - vy, P[2 * b], P[2 * b + 1]];
      } else if (model.kinds[r] === BarKind.Inner) {
        [ax, ay, bx, by] = [P[2 * a], P[2 * a + 1], P[2 * b], P[2 * b + 1]];
      } else {
        // ground at the far end, or a wrapped bar drawn as a stub along its bar vector
        [ax, ay, bx, by] = [P[2 * a], P[2 * a + 1], P[2 * a] + vx, P[2 * a + 1] + vy];
      }
      for (let j = 0; j < 4; j++) ends.set([ax - ox, ay - oy, bx - ox, by - oy], 16 * r + 4 * j);
      barCorner.set([0, 1, 0, -1, 1, -1, 1, 1], 8 * r);
    }
    const barGeometry = () =>
      new Geometry({
        attributes: {
          aEnds: { buffer: ends, format: 'float32x4' },
          aUa: { buffer: new Float32Array(16 * m), format: 'float32x4' },
          aUb: { buffer: new Float32Array(16 * m), format: 'float32x4' },
          aCorner: { buffer: barCorner, format: 'float32x2' },
          aColor: { buffer: new Float32Array(12 * m), format: 'float32x3' },
          aWidth: { buffer: new Float32Array(4 * m).fill(1), format: 'float32' },
        },
        indexBuffer: quadIndices(m, 4, QUAD),
      });
    this.rest = part(barGeometry(), BAR_VERTEX, BAR_FRAGMENT, INK.rest, true);
    this.bars = part(barGeometry(), BAR_VERTEX, BAR_FRAGMENT, INK.bar, false);

    // joints: one quad each, the disc and its outline drawn by the fragment shader
    const jp = new Float32Array(8 * n);
    const jc = new Float32Array(8 * n);
    const ap = new Float32Array(14 * n);
    const ac = new Float32Array(21 * n);
    for (let k = 0; k < n; k++) {
      const x = P[2 * k] - ox;
      const y = P[2 * k + 1] - oy;
      for (let j = 0; j < 4; j++) jp.set([x, y], 8 * k + 2 * j);
      jc.set([-1, -1, 1, -1, 1, 1, -1, 1], 8 * k);
      for (let j = 0; j < 7; j++) ap.set([x, y], 14 * k + 2 * j);
      ac.set(ARROW_CORNERS, 21 * k);
    }
    this.joints = part(
      new Geometry({
        attributes: {
          aP: { buffer: jp, format: 'float32x2' },
          aU: { buffer: new Float32Array(16 * n), format: 'float32x4' },
          aCorner: { buffer: jc, format: 'float32x2' },
          aColor: { buffer: new Float32Array(12 * n), format: 'float32x3' },
        },
        indexBuffer: quadIndices(n, 4, QUAD),
      }),
      JOINT_VERTEX,
      JOINT_FRAGMENT,
      INK.outline,
      false,
    );
    this.arrows = part(
      new Geometry({
        attributes: {
          aP: { buffer: ap, format: 'float32x2' },
          aU: { buffer: new Float32Array(28 * n), format: 'float32x4' },
          aCorner: { buffer: ac, format: 'float32x3' },
        },
        indexBuffer: quadIndices(n, 7, ARROW),
      }),
      ARROW_VERTEX,
      ARROW_FRAGMENT,
      INK.arrow,
      true,
    );
    this.parts = [this.rest, this.bars, this.arrows, this.joints];
    for (const p of this.parts) parent.addChild(p.mesh);
  }

  private buffer(p: Part, name: string): Float32Array {
    return p.mesh.geometry.getBuffer(name).data as Float32Array;
  }
  private updated(p: Part, name: string): void {
    p.mesh.geometry.getBuffer(name).update();
  }

  /** Writes the mode (or zeros) into the buffers: once per flex, not per frame. */
  setField(field: Field | null): void {
    const { n, m } = this.model;
    const g = this.model.geom;
    const re = field?.re;
    const im = field?.im ?? null;
    const scale = field && field.maxAbs > 0 ? 1 / field.maxAbs : 0;
    this.uScale = field && field.maxAbs > 0 ? field.maxAbs : 1;
    const U = (k: number, out: Float32Array, o: number) => {
      out[o] = re ? re[2 * k] * scale : 0;
      out[o + 1] = re ? re[2 * k + 1] * scale : 0;
      out[o + 2] = im ? im[2 * k] * scale : 0;
      out[o + 3] = im ? im[2 * k + 1] * scale : 0;
    };
    const ju = this.buffer(this.joints, 'aU');
    const au = this.buffer(this.arrows, 'aU');
    for (let k = 0; k < n; k++) {
      U(k, ju, 16 * k);
      for (let j = 1; j < 4; j++) ju.copyWithin(16 * k + 4 * j, 16 * k, 16 * k + 4);
      au.set(ju.subarray(16 * k, 16 * k + 4), 28 * k);
      for (let j = 1; j < 7; j++) au.copyWithin(28 * k + 4 * j, 28 * k, 28 * k + 4);
    }
    const ua = this.buffer(this.bars, 'aUa');
    const ub = this.buffer(this.bars, 'aUb');
    ua.fill(0);
    ub.fill(0);
    if (re) {
      for (let r = 0; r < m; r++) {
        const a = g.barA[r];
        const b = g.barB[r];
        const o = 16 * r;
        switch (this.model.kinds[r]) {
          case BarKind.Inner:
            U(a, ua, o);
            U(b, ub, o);
            break;
          case BarKind.GroundFrom:
            U(b, ub, o);
            break;
          case BarKind.GroundTo:
            U(a, ua, o);
            break;
          default: {
            U(a, ua, o);
            // far end: the image of b, w = phase · u_b
            const pr = g.barPhase[2 * r];
            const pi = g.barPhase[2 * r + 1];
            const ux = re[2 * b] * scale;
            const uy = re[2 * b + 1] * scale;
            const wx = im ? im[2 * b] * scale : 0;
            const wy = im ? im[2 * b + 1] * scale : 0;
            ub[o] = pr * ux - pi * wx;
            ub[o + 1] = pr * uy - pi * wy;
            ub[o + 2] = pr * wx + pi * ux;
            ub[o + 3] = pr * wy + pi * uy;
          }
        }
        for (let j = 1; j < 4; j++) {
          ua.copyWithin(o + 4 * j, o, o + 4);
          ub.copyWithin(o + 4 * j, o, o + 4);
        }
      }
    }
    this.updated(this.joints, 'aU');
    this.updated(this.arrows, 'aU');
    this.updated(this.bars, 'aUa');
    this.updated(this.bars, 'aUb');
  }

  /** Bar colours (stress map or plain/stub) and joint fills (amplitude map or plain). */
  setColours(stress: Float32Array | null, relative: Float32Array | null): void {
    const { n, m } = this.model;
    AMPLITUDE ??= table(amplitudeColour);
    STRESS ??= table((t) => stressColour(2 * t - 1));
    const bar = rgb(INK.bar);
    const stub = rgb(INK.stub);
    const joint = rgb(INK.joint);
    const bc = this.buffer(this.bars, 'aColor');
    for (let r = 0; r < m; r++) {
      let c: ArrayLike<number> = this.model.kinds[r] === BarKind.Wrapped ? stub : bar;
      if (stress) {
        const i = Math.round(Math.min(1, Math.max(0, (stress[r] + 1) / 2)) * 255);
        c = STRESS.subarray(3 * i, 3 * i + 3);
      }
      for (let j = 0; j < 4; j++) bc.set(c, 12 * r + 3 * j);
    }
    const jc = this.buffer(this.joints, 'aColor');
    for (let k = 0; k < n; k++) {
      let c: ArrayLike<number> = joint;
      if (relative) {
        const i = Math.round(Math.min(1, Math.max(0, relative[k])) * 255);
        c = AMPLITUDE.subarray(3 * i, 3 * i + 3);
      }
      for (let j = 0; j < 4; j++) jc.set(c, 12 * k + 3 * j);
    }
    this.updated(this.bars, 'aColor');
    this.updated(this.joints, 'aColor');
  }

  /** Per-bar widths as multiples of the bar width (null: all 1); written when a self-stress is selected. */
  setWidths(widths: Float32Array | null): void {
    const w = this.buffer(this.bars, 'aWidth');
    for (let r = 0; r < this.model.m; r++) w.fill(widths ? widths[r] : 1, 4 * r, 4 * r + 4);
    this.updated(this.bars, 'aWidth');
  }

  /** The width multiples as stored for the shader (one per bar), read back for checks. */
  widths(): Float32Array {
    const w = this.buffer(this.bars, 'aWidth');
    return Float32Array.from({ length: this.model.m }, (_, r) => w[4 * r]);
  }

  /** Sets the uniforms of one frame; nothing is allocated or uploaded besides them. */
  frame(f: FrameInput): void {
    const phi = 2 * Math.PI * f.turns;
    const c = Math.cos(phi);
    const s = Math.sin(phi);
    const eps = f.field ? f.field.eps * this.uScale : 0;
    const gain = f.field ? f.field.arrowGain * this.uScale : 0;
    const v = f.view;
    this.rest.mesh.visible = f.rest && f.field !== null;
    this.arrows.mesh.visible = f.field !== null && f.arrows !== 'none';
    this.bars.mesh.visible = this.joints.mesh.visible = true;
    for (let i = 0; i < this.parts.length; i++) {
      const p = this.parts[i];
      const u = p.uniforms.uniforms as Record<string, Float32Array>;
      const rest = p === this.rest;
      u.uMotion[0] = c;
      u.uMotion[1] = s;
      u.uMotion[2] = rest ? 0 : eps;
      u.uMotion[3] = gain;
      u.uView[0] = v.scale;
      u.uView[1] = v.cx - this.ox;
      u.uView[2] = v.cy - this.oy;
      u.uSize[0] = rest ? Math.max(0.5, f.sizes.bar / 2.5) : f.sizes.bar / 2;
      u.uSize[1] = f.sizes.joint;
      u.uSize[2] = f.sizes.arrow / 2;
      u.uSize[3] = f.arrows === 'displacement' ? 1 : 0;
      u.uHalf[0] = v.width / 2;
      u.uHalf[1] = v.height / 2;
      p.uniforms.update();
    }
  }

  hide(): void {
    for (const p of this.parts) p.mesh.visible = false;
  }

  destroy(): void {
    for (const p of this.parts) {
      p.mesh.removeFromParent();
      p.mesh.shader?.destroy();
      p.mesh.geometry.destroy(true);
      p.mesh.destroy();
    }
  }
}
