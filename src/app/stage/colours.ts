/**
 * Colour maps of the stage and the exports (d3-scale).
 *
 * Joint amplitude: a sequential map of our own from a warm light grey (still joints recede) to
 * a deep blue (moving joints stand out). Its CIE lightness falls monotonically, which keeps it
 * readable with any colour-vision deficiency and in greyscale print (common practice: a
 * sequential map should be monotone in lightness). Self-stress: a diverging map, compression
 * orange-brown, zero mid grey, tension blue — the blue/orange pair stays distinct for red-
 * and green-deficient viewers (common practice).
 */
import { scaleLinear } from 'd3-scale';

const AMPLITUDE_STOPS = ['#e4e1da', '#bac3c9', '#8aa2b6', '#55799f', '#2b5282', '#12305a'];
// the zero stop is a mid grey (not near the background), so that unloaded bars stay in sight
const STRESS_STOPS = ['#a34d0f', '#d98c4e', '#c2beb6', '#5f95c9', '#1f5596'];

const amplitude = scaleLinear<string>()
  .domain(AMPLITUDE_STOPS.map((_, i) => i / (AMPLITUDE_STOPS.length - 1)))
  .range(AMPLITUDE_STOPS)
  .clamp(true);
const stress = scaleLinear<string>()
  .domain(STRESS_STOPS.map((_, i) => -1 + (2 * i) / (STRESS_STOPS.length - 1)))
  .range(STRESS_STOPS)
  .clamp(true);

/** t in [0, 1]: relative joint amplitude. */
export function amplitudeColour(t: number): string {
  return toHex(amplitude(t));
}
/** s in [−1, 1]: relative bar tension (negative = compression). */
export function stressColour(s: number): string {
  return toHex(stress(s));
}

/** Fixed colours of the drawing. */
export const INK = {
  background: '#fbfaf7',
  bar: '#3d434b',
  stub: '#9aa1a9',
  rest: '#d4d0c8',
  outline: '#5a6068',
  joint: '#f4f2ee',
  arrow: '#8e2f7d',
  ground: '#6a5a44',
  marker: '#2f6f77',
  text: '#2b2f35',
} as const;

export const AMPLITUDE_GRADIENT = AMPLITUDE_STOPS;
export const STRESS_GRADIENT = STRESS_STOPS;

/** d3 gives "rgb(r, g, b)"; the drawing code wants #rrggbb. */
function toHex(c: string): string {
  if (c.startsWith('#')) return c;
  const m = /rgb\((\d+),\s*(\d+),\s*(\d+)\)/.exec(c);
  if (!m) return c;
  return '#' + [m[1], m[2], m[3]].map((v) => Number(v).toString(16).padStart(2, '0')).join('');
}

export function hexToNumber(hex: string): number {
  return parseInt(hex.slice(1), 16);
}

/** CIE L* of an sRGB colour #rrggbb (D65). */
export function lightness(hex: string): number {
  const lin = (v: number) => {
    const c = v / 255;
    return c <= 0.04045 ? c / 12.92 : ((c + 0.055) / 1.055) ** 2.4;
  };
  const r = lin(parseInt(hex.slice(1, 3), 16));
  const g = lin(parseInt(hex.slice(3, 5), 16));
  const b = lin(parseInt(hex.slice(5, 7), 16));
  const y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
  return y > 216 / 24389 ? 116 * Math.cbrt(y) - 16 : (24389 / 27) * y;
}
