/** The caution every result carries (CLI, app, exports). */
export const CAUTION =
  'Caution: shimmy performs a first-order (infinitesimal) analysis of an idealised bar-and-joint model only. ' +
  'Its optional prestress check only asks whether some self-stress of that ideal model makes the stress energy positive on every first-order flex; a real prestress, its size and its safety are not checked. ' +
  'It says nothing about strength, buckling or finite motion, and it is not a safety assessment. ' +
  'For real structures defer to local codes and licensed engineers.';

export const CAUTION_SHORT = 'First-order analysis of an idealised model; not a safety, strength or buckling assessment.';
