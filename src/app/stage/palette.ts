/**
 * A small colour texture for the stage meshes: each vertex picks its colour through its UV, so
 * thousands of differently coloured bars and joints are drawn by one mesh each.
 * Row 0: joint amplitude map; row 1: self-stress map; row 2: fixed colours (swatches).
 */
import { amplitudeColour, INK, stressColour } from './colours.js';

export const PALETTE_WIDTH = 256;
export const PALETTE_ROWS = 4;

export const SWATCHES = ['bar', 'stub', 'rest', 'outline', 'joint', 'arrow', 'ground', 'marker'] as const;
export type Swatch = (typeof SWATCHES)[number];

export function paletteCanvas(): HTMLCanvasElement {
  const c = document.createElement('canvas');
  c.width = PALETTE_WIDTH;
  c.height = PALETTE_ROWS;
  const g = c.getContext('2d')!;
  for (let x = 0; x < PALETTE_WIDTH; x++) {
    const t = x / (PALETTE_WIDTH - 1);
    g.fillStyle = amplitudeColour(t);
    g.fillRect(x, 0, 1, 1);
    g.fillStyle = stressColour(2 * t - 1);
    g.fillRect(x, 1, 1, 1);
  }
  const w = PALETTE_WIDTH / SWATCHES.length;
  SWATCHES.forEach((s, i) => {
    g.fillStyle = INK[s];
    g.fillRect(i * w, 2, w, 2);
  });
  return c;
}

/** UV of a value t ∈ [0, 1] in a gradient row. */
export function gradientU(t: number): number {
  const x = Math.min(PALETTE_WIDTH - 1, Math.max(0, Math.floor(t * (PALETTE_WIDTH - 1) + 0.5)));
  return (x + 0.5) / PALETTE_WIDTH;
}
export function rowV(row: number): number {
  return (row + 0.5) / PALETTE_ROWS;
}
export function swatchUV(s: Swatch): [number, number] {
  const w = PALETTE_WIDTH / SWATCHES.length;
  return [(SWATCHES.indexOf(s) * w + w / 2) / PALETTE_WIDTH, (2 + 1) / PALETTE_ROWS];
}
