/**
 * Password resets and changes, and what a new password ends: a reset (someone may hold the old password) ends
 * every session and API token of the account; a change ends the other sessions, and the tokens when asked.
 * Either way every other reset link of the account stops working. All of it in the transaction that sets the
 * new password, so no old credential survives a half-done change.
 */
import { and, eq, gt, isNull, sql } from 'drizzle-orm';
import { db, schema, type Database } from '$server/db';
import { hashPassword } from '$server/auth/password';
import { hashSecret, newSecret } from '$server/auth/tokens';
import type { Actor } from '$server/auth/audit';
import { PeopleError } from './errors';

const u = schema.users;
const r = schema.passwordResets;

type Tx = Parameters<Parameters<Database['transaction']>[0]>[0];

export const resetLifetimeMs = 60 * 60_000;

export async function createPasswordReset(email: string) {
	const [user] = await db()
		.select()
		.from(u)
		.where(sql`lower(${u.email}) = ${email.toLowerCase()}`);
	if (!user || !user.active) return null;
	const token = newSecret('skr');
	await db()
		.insert(r)
		.values({
			tokenHash: hashSecret(token),
			userId: user.id,
			expiresAt: new Date(Date.now() + resetLifetimeMs)
		});
	return { user, token };
}

export async function findOpenReset(token: string) {
	const [row] = await db()
		.select()
		.from(r)
		.where(and(eq(r.tokenHash, hashSecret(token)), isNull(r.usedAt), gt(r.expiresAt, new Date())));
	return row ?? null;
}

interface Ended {
	sessions: number;
	tokens: number;
	resetLinks: number;
}

/** Sets the password hash and ends the old credentials, inside `tx`. */
async function replacePassword(
	tx: Tx,
	userId: string,
	passwordHash: string,
	revokeTokens: boolean
): Promise<Ended> {
	const now = new Date();
	await tx.update(u).set({ passwordHash }).where(eq(u.id, userId));
	const s = schema.sessions;
	const t = schema.apiTokens;
	const sessions = await tx.delete(s).where(eq(s.userId, userId)).returning({ id: s.id });
	const tokens = revokeTokens
		? await tx
				.update(t)
				.set({ revokedAt: now })
				.where(and(eq(t.userId, userId), isNull(t.revokedAt)))
				.returning({ id: t.id })
		: [];
	const resetLinks = await tx
		.update(r)
		.set({ usedAt: now })
		.where(and(eq(r.userId, userId), isNull(r.usedAt)))
		.returning({ at: r.createdAt });
	return { sessions: sessions.length, tokens: tokens.length, resetLinks: resetLinks.length };
}

/** Single use, and using it voids the account's other reset links, sessions and API tokens. */
export async function completePasswordReset(token: string, password: string, ip: string | null) {
	const passwordHash = await hashPassword(password);
	return db().transaction(async (tx) => {
		const [reset] = await tx
			.update(r)
			.set({ usedAt: new Date() })
			.where(and(eq(r.tokenHash, hashSecret(token)), isNull(r.usedAt), gt(r.expiresAt, new Date())))
			.returning();
		if (!reset)
			throw new PeopleError('invalid', 'This reset link is not valid: it was used or has expired');
		const ended = await replacePassword(tx, reset.userId, passwordHash, true);
		const [user] = await tx.select().from(u).where(eq(u.id, reset.userId));
		await tx.insert(schema.auditLog).values({
			actorId: user.id,
			actorLabel: user.email,
			action: 'password.reset',
			target: user.email,
			ip,
			details: { ended }
		});
		return user.id;
	});
}

/**
 * A signed-in change (the current password already checked): every session of the account ends (the caller
 * gives this browser a fresh one), and the API tokens too when `revokeTokens`.
 */
export async function changePassword(
	actor: Actor,
	userId: string,
	password: string,
	revokeTokens: boolean
): Promise<Ended> {
	const passwordHash = await hashPassword(password);
	return db().transaction(async (tx) => {
		const ended = await replacePassword(tx, userId, passwordHash, revokeTokens);
		await tx.insert(schema.auditLog).values({
			actorId: actor.id,
			actorLabel: actor.label,
			action: 'password.change',
			target: actor.label,
			ip: actor.ip ?? null,
			details: { ended }
		});
		return ended;
	});
}
