/** The caution every result carries (CLI, app, exports). */
export const CAUTION =
  'Caution: shimmy performs a first-order (infinitesimal) analysis of an idealised bar-and-joint model only. ' +
  'It says nothing about strength, buckling, finite motion or prestress stability, and it is not a safety assessment. ' +
  'For real structures defer to local codes and licensed engineers.';

export const CAUTION_SHORT = 'First-order analysis of an idealised model; not a safety, strength or buckling assessment.';
