/** Classification labels attached to every object of every stored frame. */
export const Label = {
  /** Member of the main cluster. */
  Main: 0,
  /** Evaporated object (2D: self-propelled dipole; 3D: small fast loop), sticky once assigned. */
  Evaporated: 1,
  /** Lone object away from the cluster, not a dipole (e.g. after its partner annihilated). */
  Stray: 2,
} as const;

export type LabelValue = typeof Label[keyof typeof Label];

/** Names used in exports and reports, indexed by label value. */
export const LABEL_NAMES: readonly string[] = ["main", "evaporated", "stray"];
