import { pgTable } from 'drizzle-orm/pg-core';
import { frameColumns } from './schema/runs';

/**
 * Frames are range-partitioned by `ts` (the frame's device time) — one partition a day.
 * drizzle-kit cannot emit PARTITION BY, so the table is created by the hand-written migration
 * `drizzle/0001_frames_partitioned.sql` and kept out of drizzle-kit's schema; this declaration
 * is only for typed queries.
 */
export const frames = pgTable('frames', frameColumns);
