import { sql } from 'drizzle-orm';
import { bigint, index, pgTable, text, timestamp, uniqueIndex, uuid } from 'drizzle-orm/pg-core';
import { users } from './people';

const ts = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });

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
