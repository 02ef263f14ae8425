import { sql } from 'drizzle-orm';
import {
	bigserial,
	boolean,
	index,
	inet,
	integer,
	jsonb,
	pgEnum,
	pgTable,
	text,
	timestamp,
	uniqueIndex
} from 'drizzle-orm/pg-core';

export const roleEnum = pgEnum('role', ['admin', 'operator', 'engineer', 'triage', 'viewer']);

const ts = (name: string) => timestamp(name, { withTimezone: true, mode: 'date' });

export const users = pgTable(
	'users',
	{
		id: text('id').primaryKey(),
		email: text('email').notNull(),
		name: text('name').notNull(),
		role: roleEnum('role').notNull(),
		passwordHash: text('password_hash'),
		active: boolean('active').notNull().default(true),
		createdAt: ts('created_at').notNull().defaultNow(),
		lastSignInAt: ts('last_sign_in_at')
	},
	(t) => [uniqueIndex('users_email_key').on(sql`lower(${t.email})`)]
);

export const sessions = pgTable(
	'sessions',
	{
		id: text('id').primaryKey(),
		userId: text('user_id')
			.notNull()
			.references(() => users.id, { onDelete: 'cascade' }),
		expiresAt: ts('expires_at').notNull(),
		createdAt: ts('created_at').notNull().defaultNow(),
		ip: text('ip'),
		userAgent: text('user_agent')
	},
	(t) => [index('sessions_user_idx').on(t.userId)]
);

export const invites = pgTable('invites', {
	id: text('id').primaryKey(),
	email: text('email').notNull(),
	role: roleEnum('role').notNull(),
	tokenHash: text('token_hash').notNull().unique(),
	invitedBy: text('invited_by').references(() => users.id, { onDelete: 'set null' }),
	createdAt: ts('created_at').notNull().defaultNow(),
	expiresAt: ts('expires_at').notNull(),
	usedAt: ts('used_at'),
	revokedAt: ts('revoked_at')
});

export const passwordResets = pgTable('password_resets', {
	tokenHash: text('token_hash').primaryKey(),
	userId: text('user_id')
		.notNull()
		.references(() => users.id, { onDelete: 'cascade' }),
	createdAt: ts('created_at').notNull().defaultNow(),
	expiresAt: ts('expires_at').notNull(),
	usedAt: ts('used_at')
});

export const apiTokens = pgTable(
	'api_tokens',
	{
		id: text('id').primaryKey(),
		userId: text('user_id')
			.notNull()
			.references(() => users.id, { onDelete: 'cascade' }),
		name: text('name').notNull(),
		prefix: text('prefix').notNull(),
		tokenHash: text('token_hash').notNull().unique(),
		createdAt: ts('created_at').notNull().defaultNow(),
		lastUsedAt: ts('last_used_at'),
		revokedAt: ts('revoked_at')
	},
	(t) => [index('api_tokens_user_idx').on(t.userId)]
);

/** Failed sign-in attempts, counted per account and per address in a sliding window. */
export const signInFailures = pgTable(
	'sign_in_failures',
	{
		id: bigserial('id', { mode: 'number' }).primaryKey(),
		email: text('email').notNull(),
		ip: text('ip').notNull(),
		at: ts('at').notNull().defaultNow()
	},
	(t) => [
		index('sign_in_failures_email_idx').on(t.email, t.at),
		index('sign_in_failures_ip_idx').on(t.ip, t.at)
	]
);

export const auditLog = pgTable(
	'audit_log',
	{
		id: bigserial('id', { mode: 'number' }).primaryKey(),
		at: ts('at').notNull().defaultNow(),
		actorId: text('actor_id').references(() => users.id, { onDelete: 'set null' }),
		actorLabel: text('actor_label').notNull(),
		action: text('action').notNull(),
		target: text('target'),
		ip: inet('ip'),
		details: jsonb('details').$type<Record<string, unknown>>()
	},
	(t) => [index('audit_log_at_idx').on(t.at)]
);

export const mailOutbox = pgTable('mail_log', {
	id: bigserial('id', { mode: 'number' }).primaryKey(),
	at: ts('at').notNull().defaultNow(),
	to: text('to').notNull(),
	subject: text('subject').notNull(),
	kind: text('kind').notNull(),
	status: text('status').notNull(),
	error: text('error'),
	attempts: integer('attempts').notNull().default(1)
});
