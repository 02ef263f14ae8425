import {
	bigint,
	doublePrecision,
	index,
	jsonb,
	pgTable,
	text,
	timestamp,
	uuid
} from 'drizzle-orm/pg-core';
import { users } from './people';
import { runs } from './runs';

const ts = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });

/**
 * A moment of a run marked for triage, with the view it was seen in. `t` is seconds from the run's first
 * frame (not device time), so links read the same as the timeline and survive clock offsets between rigs.
 */
export const pins = pgTable(
	'pins',
	{
		id: uuid('id').primaryKey().defaultRandom(),
		runId: uuid('run_id')
			.notNull()
			.references(() => runs.id, { onDelete: 'cascade' }),
		t: doublePrecision('t').notNull(),
		seq: bigint('seq', { mode: 'number' }),
		title: text('title').notNull(),
		note: text('note').notNull().default(''),
		category: text('category').notNull(),
		severity: text('severity').notNull(),
		view: jsonb('view').$type<Record<string, unknown>>().notNull(),
		createdBy: text('created_by').references(() => users.id, { onDelete: 'set null' }),
		createdAt: ts('created_at').notNull().defaultNow(),
		// ready for triage: who follows it up and where it stands
		assigneeId: text('assignee_id').references(() => users.id, { onDelete: 'set null' }),
		status: text('status').notNull().default('open'),
		updatedAt: ts('updated_at').notNull().defaultNow()
	},
	(t) => [index('pins_run_t_idx').on(t.runId, t.t), index('pins_created_idx').on(t.createdAt)]
);
