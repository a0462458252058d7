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
