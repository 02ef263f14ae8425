import { sql } from 'drizzle-orm';
import {
	bigint,
	bigserial,
	boolean,
	customType,
	doublePrecision,
	index,
	integer,
	jsonb,
	pgEnum,
	pgTable,
	text,
	timestamp,
	uniqueIndex,
	uuid
} from 'drizzle-orm/pg-core';
import { COORDS, RUN_STATUSES } from '../../../runs';
import { rigs } from './rigs';

const ts = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });

export const bytea = customType<{ data: Buffer; driverData: Buffer }>({
	dataType: () => 'bytea'
});

export const runStatusEnum = pgEnum('run_status', RUN_STATUSES);
export const coordsEnum = pgEnum('coords', COORDS);

export const runs = pgTable(
	'runs',
	{
		id: uuid('id').primaryKey().defaultRandom(),
		rigId: uuid('rig_id')
			.notNull()
			.references(() => rigs.id, { onDelete: 'restrict' }),
		clientRunId: text('client_run_id'),
		name: text('name').notNull(),
		stateFields: text('state_fields').array().notNull(),
		measurementFields: text('measurement_fields').array().notNull(),
		coords: coordsEnum('coords').notNull().default('world'),
		lengthUnit: text('length_unit').notNull().default('m'),
		tags: text('tags')
			.array()
			.notNull()
			.default(sql`'{}'::text[]`),
		notes: text('notes').notNull().default(''),
		status: runStatusEnum('status').notNull().default('live'),
		startedAt: ts('started_at').notNull().defaultNow(),
		endedAt: ts('ended_at'),
		lastSeenAt: ts('last_seen_at'),
		firstT: doublePrecision('first_t'),
		lastT: doublePrecision('last_t'),
		/** next seq the run expects: 1 + the highest seq stored or quarantined */
		nextSeq: bigint('next_seq', { mode: 'number' }).notNull().default(0),
		frameCount: bigint('frame_count', { mode: 'number' }).notNull().default(0),
		quarantineCount: bigint('quarantine_count', { mode: 'number' }).notNull().default(0),
		/** kept runs survive retention (pins mark runs kept) */
		kept: boolean('kept').notNull().default(false),
		metricSettings: jsonb('metric_settings').$type<Record<string, unknown>>(),
		summary: jsonb('summary').$type<Record<string, unknown>>()
	},
	(t) => [
		uniqueIndex('runs_rig_client_run_key').on(t.rigId, t.clientRunId),
		index('runs_started_idx').on(t.startedAt),
		index('runs_status_idx').on(t.status)
	]
);

export const quarantine = pgTable(
	'quarantine',
	{
		id: bigserial('id', { mode: 'number' }).primaryKey(),
		runId: uuid('run_id').references(() => runs.id, { onDelete: 'cascade' }),
		rigId: uuid('rig_id').references(() => rigs.id, { onDelete: 'cascade' }),
		seq: bigint('seq', { mode: 'number' }),
		receivedAt: ts('received_at').notNull().defaultNow(),
		reason: text('reason').notNull(),
		raw: bytea('raw').notNull()
	},
	(t) => [index('quarantine_run_idx').on(t.runId, t.seq)]
);

export const frameColumns = {
	runId: uuid('run_id').notNull(),
	seq: bigint('seq', { mode: 'number' }).notNull(),
	t: doublePrecision('t').notNull(),
	ts: ts('ts').notNull(),
	data: bytea('data').notNull(),
	nMeasurements: integer('n_measurements'),
	nEstimates: integer('n_estimates'),
	nTruth: integer('n_truth'),
	expectedCardinality: doublePrecision('expected_cardinality'),
	cardinalitySd: doublePrecision('cardinality_sd'),
	gospa: doublePrecision('gospa'),
	gospaLocalization: doublePrecision('gospa_localization'),
	gospaMissed: integer('gospa_missed'),
	gospaFalse: integer('gospa_false'),
	ospa: doublePrecision('ospa'),
	neesMean: doublePrecision('nees_mean'),
	neesCount: integer('nees_count'),
	zones: jsonb('zones').$type<Record<string, number>>()
};
