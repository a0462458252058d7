/**
 * The framework model: one building block (unit cell) of a 2D periodic bar-and-joint framework.
 *
 * A bar joins joint `from` in cell c to joint `to` in cell c + shift, where a cell index
 * c = (c1, c2) places the cell's origin at c1·a1 + c2·a2. Joint positions `at` are Cartesian,
 * in the same units as the lattice vectors.
 */
export type Vec2 = [number, number];

export interface Joint {
  /** Unique name of the joint inside the unit cell. */
  id: string;
  /** Cartesian position of the joint in cell (0, 0). */
  at: Vec2;
}

export interface Bar {
  from: string;
  to: string;
  /** Integer cell offset of the `to` end relative to the `from` end. */
  shift: [number, number];
}

export interface Framework {
  name?: string;
  description?: string;
  /** Lattice vectors [a1, a2]; they must span the plane. */
  lattice: [Vec2, Vec2];
  joints: Joint[];
  bars: Bar[];
}

/** A bar resolved against its unit cell: site indices of its ends, its shift and its vector. */
export interface ResolvedBar {
  /** Index (in `joints`) of the `from` and `to` joints. */
  from: number;
  to: number;
  shift: [number, number];
  /** to's position in cell `shift` minus from's position in cell (0, 0), Cartesian. */
  vector: Vec2;
}

/** Every bar of a (validated) framework with its end sites and bar vector, in file order. */
export function resolveBars(fw: Framework): ResolvedBar[] {
  const site = new Map(fw.joints.map((j, k) => [j.id, k]));
  const [a1, a2] = fw.lattice;
  return fw.bars.map((bar) => {
    const from = site.get(bar.from)!;
    const to = site.get(bar.to)!;
    const [s1, s2] = bar.shift;
    const pa = fw.joints[from].at;
    const pb = fw.joints[to].at;
    return { from, to, shift: [s1, s2], vector: [pb[0] - pa[0] + (s1 * a1[0] + s2 * a2[0]), pb[1] - pa[1] + (s1 * a1[1] + s2 * a2[1])] };
  });
}
