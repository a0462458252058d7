/** GIF of one animation period (gif.js; its worker script is served by vite as an asset URL). */
import GIF from 'gif.js';
import workerUrl from 'gif.js/dist/gif.worker.js?url';
import { INK } from '../stage/colours.js';
import type { FigureSpec } from './figure.js';
import { figureCanvas } from './paint2d.js';

export interface GifOptions {
  frames: number;
  /** Seconds per period. */
  period: number;
  /** Drawing the frames (stage 'drawing') and encoding them ('encoding'), each from 0 to 1. */
  onProgress?: (fraction: number, stage: 'drawing' | 'encoding') => void;
  signal?: AbortSignal;
}

const nextTask = () => new Promise<void>((r) => setTimeout(r, 0));

/**
 * Frame k shows phase k/frames; every frame lasts period/frames (rounded to 1/100 s by the
 * format). Frames are drawn one per task so the page stays responsive; the encoding runs in
 * gif.js's workers.
 */
export async function encodeGif(figureAt: (turns: number) => FigureSpec, o: GifOptions): Promise<Blob> {
  const first = figureCanvas(figureAt(0));
  const width = first.width;
  const height = first.height;
  const gif = new GIF({ workers: 2, quality: 10, workerScript: workerUrl, width, height, repeat: 0, background: INK.background });
  const delay = (o.period * 1000) / o.frames;
  for (let k = 0; k < o.frames; k++) {
    if (o.signal?.aborted) throw new Error('The GIF export was cancelled.');
    const canvas = k === 0 ? first : figureCanvas(figureAt(k / o.frames));
    const ctx = canvas.getContext('2d', { willReadFrequently: true })!;
    gif.addFrame(ctx.getImageData(0, 0, width, height), { delay });
    o.onProgress?.((k + 1) / o.frames, 'drawing');
    await nextTask();
  }
  return new Promise((resolve, reject) => {
    gif.on('progress', (p) => o.onProgress?.(p, 'encoding'));
    gif.on('finished', (blob) => resolve(blob));
    gif.on('abort', () => reject(new Error('The GIF export was cancelled.')));
    o.signal?.addEventListener('abort', () => gif.abort());
    gif.render();
  });
}
