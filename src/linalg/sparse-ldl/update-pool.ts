/**
 * Buffers for the update matrices, reused once their parent has consumed them: on machines where
 * the first write to fresh memory costs a page fault per 4 kB (measured here: 32 MB took ~0.1 s),
 * allocating every update matrix anew cost a large share of the factorisation. Best fit among the
 * free buffers (a view of the needed length; every entry is written before it is read); a free
 * list beyond `cap` words lets the extra buffers go to the garbage collector, so the memory held
 * stays within the live update matrices plus `cap` (factorBytes counts it).
 */
export class UpdatePool {
  private free: Float64Array[] = [];
  private freeWords = 0;
  constructor(private readonly cap: number) {}

  take(words: number): Float64Array {
    // the free list is sorted by length: the first long enough is the best fit
    let lo = 0;
    let hi = this.free.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (this.free[mid].length < words) lo = mid + 1;
      else hi = mid;
    }
    if (lo < this.free.length) {
      const buf = this.free[lo];
      this.free.splice(lo, 1);
      this.freeWords -= buf.length;
      return buf.length === words ? buf : buf.subarray(0, words);
    }
    return new Float64Array(words);
  }

  give(view: Float64Array): void {
    const buf = view.byteOffset === 0 && view.buffer.byteLength === view.byteLength ? view : new Float64Array(view.buffer as ArrayBuffer);
    if (this.freeWords + buf.length > this.cap) return;
    let lo = 0;
    let hi = this.free.length;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (this.free[mid].length < buf.length) lo = mid + 1;
      else hi = mid;
    }
    this.free.splice(lo, 0, buf);
    this.freeWords += buf.length;
  }
}
