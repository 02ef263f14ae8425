/**
 * Rigs and the feed keys they stream with. A feed key secret (`skf_…`) leaves this module once, when it is
 * made; afterwards only its prefix is known. Key hashes never leave it at all.
 */
import { and, asc, desc, eq, gt, inArray, isNull, or, sql } from 'drizzle-orm';
import { db, schema } from '$server/db';
import { hashSecret, newSecret, secretPrefix } from '$server/auth/tokens';
import type { Actor } from '$server/auth/audit';
import { uuidField } from '$lib/validation/rigs';

const r = schema.rigs;
const k = schema.feedKeys;

/** Payload: the key id. Sent for each key that stops working at once, in the transaction that stops it. */
export const keyRevokedChannel = 'skein_feed_key_revoked';
/** payload "<key id> <expiry, ms since the epoch>": connections on the key close when it expires */
export const keyExpiryChannel = 'skein_feed_key_expiry';

/** A key with an expiry closer than this is shown as expiring. */
export const expiringWindowMs = 7 * 24 * 3600_000;

export class RigsError extends Error {
	constructor(
		public code: 'conflict' | 'not_found' | 'invalid',
		message: string,
		public field?: string
	) {
		super(message);
	}
}

type Tx = Parameters<Parameters<ReturnType<typeof db>['transaction']>[0]>[0];

export type KeyStatus = 'active' | 'expiring' | 'expired' | 'revoked';

export function keyStatus(
	key: { revokedAt: Date | null; expiresAt: Date | null },
	now = new Date()
): KeyStatus {
	if (key.revokedAt) return 'revoked';
	if (key.expiresAt && key.expiresAt.getTime() <= now.getTime()) return 'expired';
	if (key.expiresAt && key.expiresAt.getTime() - now.getTime() <= expiringWindowMs)
		return 'expiring';
	return 'active';
}

function isUuid(id: string): boolean {
	return uuidField.safeParse(id).success;
}

function isUniqueViolation(err: unknown): boolean {
	for (let e: unknown = err; e instanceof Error; e = e.cause) {
		if ((e as Error & { code?: unknown }).code === '23505') return true;
	}
	return false;
}

async function auditIn(
	tx: Tx,
	actor: Actor,
	action: string,
	target: string,
	details: Record<string, unknown> | null = null
) {
	await tx.insert(schema.auditLog).values({
		actorId: actor.id,
		actorLabel: actor.label,
		action,
		target,
		ip: actor.ip ?? null,
		details
	});
}

async function notifyStopped(tx: Tx, keyIds: string[]) {
	for (const id of keyIds) await tx.execute(sql`select pg_notify(${keyRevokedChannel}, ${id})`);
}

// ---- rigs ----

// Written out by hand: in a one-table select Drizzle leaves column names unqualified, which inside these
// subqueries would bind to feed_keys/runs instead of the outer rigs row.
const rigColumns = {
	id: r.id,
	name: r.name,
	description: r.description,
	createdAt: r.createdAt,
	archivedAt: r.archivedAt,
	activeKeys: sql<number>`(select count(*)::int from feed_keys fk where fk.rig_id = rigs.id and fk.revoked_at is null and (fk.expires_at is null or fk.expires_at > now()))`,
	totalKeys: sql<number>`(select count(*)::int from feed_keys fk where fk.rig_id = rigs.id)`,
	lastActivityAt: sql<string | null>`greatest(
		(select max(fk.last_used_at) from feed_keys fk where fk.rig_id = rigs.id),
		(select max(coalesce(ru.last_seen_at, ru.started_at)) from runs ru where ru.rig_id = rigs.id))`
};

export type RigView = Awaited<ReturnType<typeof listRigs>>[number];

function withDates<T extends { lastActivityAt: string | Date | null }>(
	row: T
): Omit<T, 'lastActivityAt'> & { lastActivityAt: Date | null } {
	return {
		...row,
		lastActivityAt: row.lastActivityAt === null ? null : new Date(row.lastActivityAt)
	};
}

/** Every rig with its count of working keys and its last activity (a key used or a run seen). */
export async function listRigs() {
	const rows = await db()
		.select(rigColumns)
		.from(r)
		.orderBy(asc(sql`lower(${r.name})`));
	return rows.map(withDates);
}

export async function getRig(id: string) {
	if (!isUuid(id)) return null;
	const [row] = await db().select(rigColumns).from(r).where(eq(r.id, id));
	return row ? withDates(row) : null;
}

export async function findRigByName(name: string) {
	const [row] = await db()
		.select()
		.from(r)
		.where(sql`lower(${r.name}) = ${name.trim().toLowerCase()}`);
	return row ?? null;
}

async function requireRig(id: string) {
	const rig = isUuid(id) ? (await db().select().from(r).where(eq(r.id, id)))[0] : undefined;
	if (!rig) throw new RigsError('not_found', 'No such rig');
	return rig;
}

function nameTaken(name: string) {
	return new RigsError('conflict', `A rig named "${name}" already exists`, 'name');
}

export async function createRig(actor: Actor, input: { name: string; description?: string }) {
	if (await findRigByName(input.name)) throw nameTaken(input.name);
	try {
		return await db().transaction(async (tx) => {
			const [rig] = await tx
				.insert(r)
				.values({ name: input.name, description: input.description ?? '' })
				.returning();
			await auditIn(tx, actor, 'rig.create', rig.name, { id: rig.id });
			return rig;
		});
	} catch (err) {
		if (isUniqueViolation(err)) throw nameTaken(input.name);
		throw err;
	}
}

export async function renameRig(actor: Actor, id: string, name: string) {
	const rig = await requireRig(id);
	if (rig.name === name) return;
	const other = await findRigByName(name);
	if (other && other.id !== id) throw nameTaken(name);
	try {
		await db().transaction(async (tx) => {
			await tx.update(r).set({ name }).where(eq(r.id, id));
			await auditIn(tx, actor, 'rig.rename', name, { id, from: rig.name });
		});
	} catch (err) {
		if (isUniqueViolation(err)) throw nameTaken(name);
		throw err;
	}
}

export async function describeRig(actor: Actor, id: string, description: string) {
	const rig = await requireRig(id);
	if (rig.description === description) return;
	await db().transaction(async (tx) => {
		await tx.update(r).set({ description }).where(eq(r.id, id));
		await auditIn(tx, actor, 'rig.describe', rig.name, { id });
	});
}

/** An archived rig's keys stop working (resolveFeedKey refuses them), so open sockets are told at once. */
export async function setRigArchived(actor: Actor, id: string, archived: boolean) {
	const rig = await requireRig(id);
	if (!!rig.archivedAt === archived) return;
	await db().transaction(async (tx) => {
		await tx
			.update(r)
			.set({ archivedAt: archived ? new Date() : null })
			.where(eq(r.id, id));
		if (archived) {
			const working = await tx
				.select({ id: k.id })
				.from(k)
				.where(
					and(
						eq(k.rigId, id),
						isNull(k.revokedAt),
						or(isNull(k.expiresAt), gt(k.expiresAt, new Date()))
					)
				);
			await notifyStopped(
				tx,
				working.map((w) => w.id)
			);
		}
		await auditIn(tx, actor, archived ? 'rig.archive' : 'rig.unarchive', rig.name, { id });
	});
}

/** The API's PATCH: any of name, description, archived. */
export async function updateRig(
	actor: Actor,
	id: string,
	patch: { name?: string; description?: string; archived?: boolean }
) {
	await requireRig(id);
	if (patch.name !== undefined) await renameRig(actor, id, patch.name);
	if (patch.description !== undefined) await describeRig(actor, id, patch.description);
	if (patch.archived !== undefined) await setRigArchived(actor, id, patch.archived);
	return (await getRig(id))!;
}

// ---- feed keys ----

const keyColumns = {
	id: k.id,
	rigId: k.rigId,
	label: k.label,
	prefix: k.prefix,
	createdAt: k.createdAt,
	expiresAt: k.expiresAt,
	revokedAt: k.revokedAt,
	rotatedTo: k.rotatedTo,
	lastUsedAt: k.lastUsedAt,
	lastUsedIp: k.lastUsedIp,
	framesReceived: k.framesReceived
};

function selectKeys() {
	return db().select(keyColumns).from(k);
}

type KeyRow = Awaited<ReturnType<typeof selectKeys>>[number];

export type FeedKeyView = KeyRow & { status: KeyStatus };

function view<T extends KeyRow>(row: T, now = new Date()): T & { status: KeyStatus } {
	return { ...row, status: keyStatus(row, now) };
}

export async function listFeedKeys(rigId: string): Promise<FeedKeyView[]> {
	if (!isUuid(rigId)) return [];
	const rows = await selectKeys().where(eq(k.rigId, rigId)).orderBy(desc(k.createdAt));
	const now = new Date();
	return rows.map((row) => view(row, now));
}

/** Every key with its rig's name, for the CLI. */
export async function listAllFeedKeys(rigName?: string) {
	const rows = await db()
		.select({ ...keyColumns, rigName: r.name, rigArchivedAt: r.archivedAt })
		.from(k)
		.innerJoin(r, eq(r.id, k.rigId))
		.where(
			rigName === undefined ? undefined : sql`lower(${r.name}) = ${rigName.trim().toLowerCase()}`
		)
		.orderBy(asc(sql`lower(${r.name})`), desc(k.createdAt));
	const now = new Date();
	return rows.map((row) => view(row, now));
}

export async function getFeedKey(id: string): Promise<FeedKeyView | null> {
	if (!isUuid(id)) return null;
	const [row] = await selectKeys().where(eq(k.id, id));
	return row ? view(row) : null;
}

export async function findFeedKeysByPrefix(prefix: string): Promise<FeedKeyView[]> {
	const rows = await selectKeys().where(eq(k.prefix, prefix));
	return rows.map((row) => view(row));
}

/**
 * The secret is 192 random bits, so the stored HMAC-SHA-256 (keyed by the server pepper) cannot be reversed by
 * guessing, and a rig connection costs one fast hash and one index lookup; a slow password hash would buy nothing.
 */
async function insertKey(
	tx: Tx,
	actor: Actor,
	rigId: string,
	label: string,
	expiresAt: Date | null
) {
	const secret = newSecret('skf');
	const [row] = await tx
		.insert(k)
		.values({
			rigId,
			label,
			expiresAt,
			prefix: secretPrefix(secret),
			keyHash: hashSecret(secret),
			createdBy: actor.id
		})
		.returning(keyColumns);
	return { key: view(row), secret };
}

/** Makes a key; the secret is returned here and never again. */
export async function createFeedKey(
	actor: Actor,
	rigId: string,
	input: { label?: string; expiresAt?: Date | null }
) {
	const rig = await requireRig(rigId);
	if (rig.archivedAt)
		throw new RigsError(
			'conflict',
			`Rig "${rig.name}" is archived; unarchive it before making keys`
		);
	if (input.expiresAt && input.expiresAt.getTime() <= Date.now())
		throw new RigsError('invalid', 'Expiry must be in the future', 'expiresAt');
	return db().transaction(async (tx) => {
		const made = await insertKey(tx, actor, rig.id, input.label ?? '', input.expiresAt ?? null);
		await auditIn(tx, actor, 'feed_key.create', rig.name, {
			keyId: made.key.id,
			prefix: made.key.prefix,
			label: made.key.label,
			expiresAt: made.key.expiresAt
		});
		return made;
	});
}

async function requireKey(tx: Tx, id: string) {
	const [row] = isUuid(id)
		? await tx
				.select({ ...keyColumns, rigName: r.name, rigArchivedAt: r.archivedAt })
				.from(k)
				.innerJoin(r, eq(r.id, k.rigId))
				.where(eq(k.id, id))
				.for('update', { of: k })
		: [];
	if (!row) throw new RigsError('not_found', 'No such feed key');
	return row;
}

export async function labelFeedKey(actor: Actor, id: string, label: string): Promise<FeedKeyView> {
	return db().transaction(async (tx) => {
		const key = await requireKey(tx, id);
		const [row] = await tx.update(k).set({ label }).where(eq(k.id, id)).returning(keyColumns);
		await auditIn(tx, actor, 'feed_key.label', key.rigName, {
			keyId: id,
			prefix: key.prefix,
			from: key.label,
			to: label
		});
		return view(row);
	});
}

/** Revokes a key and, in the same transaction, notifies every process so open sockets on it close. */
export async function revokeFeedKey(actor: Actor, id: string): Promise<FeedKeyView> {
	return db().transaction(async (tx) => {
		const key = await requireKey(tx, id);
		if (key.revokedAt) throw new RigsError('conflict', 'This feed key is already revoked');
		const [row] = await tx
			.update(k)
			.set({ revokedAt: new Date() })
			.where(eq(k.id, id))
			.returning(keyColumns);
		await notifyStopped(tx, [id]);
		await auditIn(tx, actor, 'feed_key.revoke', key.rigName, { keyId: id, prefix: key.prefix });
		return view(row);
	});
}

/**
 * Makes a new key with the old one's label; the old key keeps working for `graceMinutes` (never longer than
 * it would have anyway), so a rig can switch without a gap. With no grace the old key stops now.
 */
export async function rotateFeedKey(actor: Actor, id: string, graceMinutes: number) {
	return db().transaction(async (tx) => {
		const old = await requireKey(tx, id);
		if (old.revokedAt) throw new RigsError('conflict', 'A revoked feed key cannot be rotated');
		if (old.rotatedTo) throw new RigsError('conflict', 'This feed key was already rotated');
		if (old.rigArchivedAt)
			throw new RigsError(
				'conflict',
				`Rig "${old.rigName}" is archived; unarchive it before rotating keys`
			);
		const now = Date.now();
		const graceEnd = new Date(now + graceMinutes * 60_000);
		const oldEnd = old.expiresAt && old.expiresAt < graceEnd ? old.expiresAt : graceEnd;
		const made = await insertKey(tx, actor, old.rigId, old.label, null);
		const [previous] = await tx
			.update(k)
			.set({ expiresAt: oldEnd, rotatedTo: made.key.id })
			.where(eq(k.id, id))
			.returning(keyColumns);
		// with no grace the old key expires now (it is not revoked): its sockets close with "key expired"
		await tx.execute(sql`select pg_notify(${keyExpiryChannel}, ${`${id} ${oldEnd.getTime()}`})`);
		await auditIn(tx, actor, 'feed_key.rotate', old.rigName, {
			keyId: id,
			prefix: old.prefix,
			newKeyId: made.key.id,
			newPrefix: made.key.prefix,
			graceMinutes
		});
		return { ...made, previous: view(previous) };
	});
}

export type FeedKeyResolution =
	| { ok: true; rigId: string; keyId: string; expiresAt: number | null }
	| { ok: false; reason: string };

/** What the ingest side asks when a rig connects: does this secret open a feed, and for which rig? */
export async function resolveFeedKey(secret: string): Promise<FeedKeyResolution> {
	if (!secret.startsWith('skf_') || secret.length > 200)
		return { ok: false, reason: 'unknown feed key' };
	const [row] = await db()
		.select({
			keyId: k.id,
			rigId: k.rigId,
			revokedAt: k.revokedAt,
			expiresAt: k.expiresAt,
			archivedAt: r.archivedAt
		})
		.from(k)
		.innerJoin(r, eq(r.id, k.rigId))
		.where(eq(k.keyHash, hashSecret(secret)));
	if (!row) return { ok: false, reason: 'unknown feed key' };
	if (row.revokedAt) return { ok: false, reason: 'feed key revoked' };
	if (row.expiresAt && row.expiresAt.getTime() <= Date.now())
		return { ok: false, reason: 'feed key expired' };
	if (row.archivedAt) return { ok: false, reason: 'rig archived' };
	return {
		ok: true,
		rigId: row.rigId,
		keyId: row.keyId,
		expiresAt: row.expiresAt ? row.expiresAt.getTime() : null
	};
}

/** Whether a key in use still opens its feed: `stopped` says why not; expiresAt in ms since the epoch. */
export interface FeedKeyState {
	stopped: 'feed key revoked' | 'rig archived' | null;
	expiresAt: number | null;
}

/**
 * For the ingest side's periodic re-check of open connections (the safety net under the revocation
 * notifications): each key's state now. A key that no longer exists counts as revoked.
 */
export async function feedKeyStates(keyIds: string[]): Promise<Map<string, FeedKeyState>> {
	const states = new Map<string, FeedKeyState>(
		keyIds.map((id) => [id, { stopped: 'feed key revoked', expiresAt: null }])
	);
	if (keyIds.length === 0) return states;
	const rows = await db()
		.select({
			keyId: k.id,
			revokedAt: k.revokedAt,
			expiresAt: k.expiresAt,
			archivedAt: r.archivedAt
		})
		.from(k)
		.innerJoin(r, eq(r.id, k.rigId))
		.where(inArray(k.id, keyIds));
	for (const row of rows)
		states.set(row.keyId, {
			stopped: row.revokedAt ? 'feed key revoked' : row.archivedAt ? 'rig archived' : null,
			expiresAt: row.expiresAt ? row.expiresAt.getTime() : null
		});
	return states;
}

/** For the ingest side: a connection was accepted on this key, and/or frames arrived on it. */
export async function recordFeedKeyUse(
	keyId: string,
	use: { ip?: string | null; frames?: number }
) {
	await db()
		.update(k)
		.set({
			lastUsedAt: new Date(),
			...(use.ip !== undefined ? { lastUsedIp: use.ip } : {}),
			framesReceived: sql`${k.framesReceived} + ${use.frames ?? 0}`
		})
		.where(eq(k.id, keyId));
}
