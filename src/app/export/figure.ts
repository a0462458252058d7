/** What a still or animated figure shows: shared by the PNG, GIF and SVG exports. */
import { strokeSizes, type ArrowMode, type Field, type SceneModel, type View } from '../stage/scene.js';

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
  /** Background colour; null for transparent; left out: the stage's paper colour. */
  background?: string | null;
  /** Multiplies the bar and joint sizes (1 as on the stage). */
  lineScale?: number;
  /** Multiplies the arrows' length and width (1 as on the stage). */
  arrowScale?: number;
  /** The SVG's outer width and height with their unit (e.g. "80mm"); left out: the layout's px. */
  outerSize?: [string, string];
}

/** Stroke sizes of a figure: the stage's, scaled by lineScale and arrowScale. */
export function figureStrokes(f: FigureSpec): { bar: number; joint: number; arrow: number } {
  const s = strokeSizes(f.model, f.view);
  const line = f.lineScale ?? 1;
  return { bar: s.bar * line, joint: s.joint * line, arrow: s.arrow * (f.arrowScale ?? 1) };
}

export const CAPTION_LINE = 15;

/** Height reserved under the drawing for the caption. */
export function captionHeight(lines: number): number {
  return lines ? 10 + CAPTION_LINE * lines : 0;
}
