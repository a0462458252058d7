/** Types for gif.js 0.2.0, which ships none (only what the app uses). */
declare module 'gif.js' {
  export interface GIFOptions {
    /** Number of encoder workers. */
    workers?: number;
    /** Pixel sample interval of the colour quantiser; lower is better (and slower). */
    quality?: number;
    /** URL of gif.worker.js. */
    workerScript?: string;
    background?: string;
    width?: number | null;
    height?: number | null;
    transparent?: number | null;
    dither?: boolean | string;
    debug?: boolean;
    /** −1 = play once, 0 = loop forever. */
    repeat?: number;
  }
  export interface AddFrameOptions {
    /** Frame delay in milliseconds (stored in hundredths of a second). */
    delay?: number;
    copy?: boolean;
    dispose?: number;
  }
  export default class GIF {
    constructor(options?: GIFOptions);
    running: boolean;
    addFrame(image: ImageData | CanvasRenderingContext2D | HTMLCanvasElement | HTMLImageElement, options?: AddFrameOptions): void;
    on(event: 'finished', listener: (blob: Blob, data: Uint8Array) => void): this;
    on(event: 'progress', listener: (fraction: number) => void): this;
    on(event: 'start' | 'abort', listener: () => void): this;
    render(): void;
    abort(): void;
  }
}
