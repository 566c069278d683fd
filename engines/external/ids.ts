/** Ids of the external-program engines (a light module: the launcher's permission step reads it). */
export const EXTERNAL_2D_ID = "external-program-2d";
export const EXTERNAL_3D_ID = "external-program-3d";
export const EXTERNAL_ENGINE_IDS: readonly string[] = [EXTERNAL_2D_ID, EXTERNAL_3D_ID];
