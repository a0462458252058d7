/** Small shared helpers for the tests. */
import { expect } from 'vitest';
import { InputError, type Problem } from '../src/errors.js';
import { count } from '../src/analysis.js';
import { countsOf, type FlexCounts } from '../src/flex/spaces.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';

export function counts(fw: Framework | string, cells: [number, number], bc: string, tolerance?: number): FlexCounts {
  const framework = typeof fw === 'string' ? buildGallery(fw) : fw;
  return countsOf(count({ framework, cells, boundary: bc, tolerance }).analysis);
}

export function gcd(a: number, b: number): number {
  return b === 0 ? a : gcd(b, a % b);
}

/** Deterministic pseudo-random numbers (mulberry32). */
export function rng(seed: number): () => number {
  let t = seed >>> 0;
  return () => {
    t = (t + 0x6d2b79f5) >>> 0;
    let r = Math.imul(t ^ (t >>> 15), 1 | t);
    r = (r + Math.imul(r ^ (r >>> 7), 61 | r)) ^ r;
    return ((r ^ (r >>> 14)) >>> 0) / 4294967296;
  };
}

/** A random periodic framework: S joints at random places, B bars with shifts in [-2, 2]. */
export function randomFramework(seed: number, S: number, B: number): Framework {
  const r = rng(seed);
  const joints = Array.from({ length: S }, (_, k) => ({ id: `J${k}`, at: [r() * 0.9, r() * 0.9] as [number, number] }));
  const bars: Framework['bars'] = [];
  const seen = new Set<string>();
  while (bars.length < B) {
    const a = Math.floor(r() * S);
    const b = Math.floor(r() * S);
    const s: [number, number] = [Math.floor(r() * 5) - 2, Math.floor(r() * 3) - 1];
    if (a === b && s[0] === 0 && s[1] === 0) continue;
    const key = `${a},${b},${s}`;
    const rev = `${b},${a},${-s[0]},${-s[1]}`;
    if (seen.has(key) || seen.has(rev)) continue;
    seen.add(key);
    bars.push({ from: `J${a}`, to: `J${b}`, shift: s });
  }
  return { name: `random-${seed}`, lattice: [[1, 0], [0.3, 1.1]], joints, bars };
}

/** The problems an InputError lists, each with a fix (fails the test when anything else is thrown, or nothing). */
export function inputProblems(f: () => unknown): Problem[] {
  try {
    f();
  } catch (e) {
    expect(e).toBeInstanceOf(InputError);
    const ps = (e as InputError).problems;
    for (const p of ps) expect(p.fix.length).toBeGreaterThan(0);
    return ps;
  }
  throw new Error('expected an InputError');
}
