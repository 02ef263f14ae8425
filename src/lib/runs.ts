/**
 * What a run is, in words both the server and the browser use: the states it can be in and the coordinate
 * frames its positions can be given in. The database enums are declared from these lists.
 */

/** live: a rig is streaming (or may resume); ended, interrupted: by the rig or the grace period; imported: uploaded */
export const RUN_STATUSES = ['live', 'ended', 'interrupted', 'imported'] as const;
export type RunStatus = (typeof RUN_STATUSES)[number];

/** world: a fixed frame shared by the whole run; ego: relative to the moving sensor platform */
export const COORDS = ['world', 'ego'] as const;
export type Coords = (typeof COORDS)[number];
