/** What a still or animated figure shows: shared by the PNG, GIF and SVG exports. */
import type { ArrowMode, Field, SceneModel, View } from '../stage/scene.js';

export interface FigureSpec {
  model: SceneModel;
  field: Field | null;
  /** Bar tensions in [−1, 1] when a self-stress is shown. */
  stress: Float32Array | null;
  turns: number;
  arrows: ArrowMode;
  colour: boolean;
  rest: boolean;
  view: View;
  /** Lines printed under the drawing (setup and the short caution). */
  caption: string[];
  /** Legend title, or null for none. */
  legend: { kind: 'amplitude' | 'stress'; title: string } | null;
}

export const CAPTION_LINE = 15;

/** Height reserved under the drawing for the caption. */
export function captionHeight(lines: number): number {
  return lines ? 10 + CAPTION_LINE * lines : 0;
}
