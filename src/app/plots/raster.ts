/** Browser-only helpers of the plots: pixels to an image, an SVG document to a PNG. */

/** RGBA pixels (size × size) as a canvas, scaled up `scale` times without smoothing. */
export function pixelsCanvas(size: number, data: Uint8ClampedArray, scale = 1): HTMLCanvasElement {
  const small = document.createElement('canvas');
  small.width = size;
  small.height = size;
  small.getContext('2d')!.putImageData(new ImageData(new Uint8ClampedArray(data), size, size), 0, 0);
  if (scale === 1) return small;
  const big = document.createElement('canvas');
  big.width = size * scale;
  big.height = size * scale;
  const ctx = big.getContext('2d')!;
  ctx.imageSmoothingEnabled = false;
  ctx.drawImage(small, 0, 0, big.width, big.height);
  return big;
}

/** Renders an SVG document into a PNG `scale` times its size (the figure, not the window, sets the size). */
export function svgToPng(svg: string, width: number, height: number, scale = 3, background: string | null = null): Promise<Blob> {
  return new Promise((resolve, reject) => {
    const img = new Image();
    img.onload = () => {
      const c = document.createElement('canvas');
      c.width = Math.round(width * scale);
      c.height = Math.round(height * scale);
      const ctx = c.getContext('2d')!;
      if (background) {
        ctx.fillStyle = background;
        ctx.fillRect(0, 0, c.width, c.height);
      }
      ctx.drawImage(img, 0, 0, c.width, c.height);
      c.toBlob((b) => (b ? resolve(b) : reject(new Error('the browser returned no PNG'))), 'image/png');
    };
    img.onerror = () => reject(new Error('the figure could not be drawn as an image'));
    img.src = `data:image/svg+xml;charset=utf-8,${encodeURIComponent(svg)}`;
  });
}
