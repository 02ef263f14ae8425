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
import { users } from './people';

const ts = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });

export const bytea = customType<{ data: Buffer; driverData: Buffer }>({
	dataType: () => 'bytea'
});

export const rigs = pgTable(
	'rigs',
	{
		id: uuid('id').primaryKey().defaultRandom(),
		name: text('name').notNull(),
		description: text('description').notNull().default(''),
		createdAt: ts('created_at').notNull().defaultNow(),
		archivedAt: ts('archived_at')
	},
	(t) => [uniqueIndex('rigs_name_key').on(sql`lower(${t.name})`)]
);

export const feedKeys = pgTable(
	'feed_keys',
	{
		id: uuid('id').primaryKey().defaultRandom(),
		rigId: uuid('rig_id')
			.notNull()
			.references(() => rigs.id, { onDelete: 'cascade' }),
		label: text('label').notNull().default(''),
		prefix: text('prefix').notNull(),
		keyHash: text('key_hash').notNull().unique(),
		createdAt: ts('created_at').notNull().defaultNow(),
		createdBy: text('created_by').references(() => users.id, { onDelete: 'set null' }),
		expiresAt: ts('expires_at'),
		revokedAt: ts('revoked_at'),
		rotatedTo: uuid('rotated_to'),
		lastUsedAt: ts('last_used_at'),
		lastUsedIp: text('last_used_ip'),
		framesReceived: bigint('frames_received', { mode: 'number' }).notNull().default(0)
	},
	(t) => [index('feed_keys_rig_idx').on(t.rigId)]
);

export const runStatusEnum = pgEnum('run_status', ['live', 'ended', 'interrupted', 'imported']);
export const coordsEnum = pgEnum('coords', ['world', 'ego']);

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
