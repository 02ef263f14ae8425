import { and, count, eq, gt, lt } from 'drizzle-orm';
import { db, schema } from '$server/db';

/**
 * Sign-in throttling over a sliding window, per account and per address.
 * Limits follow common practice (a handful of tries per account, more per address, which many people may share).
 */
export const throttleLimits = {
	windowMinutes: Number(process.env.SIGNIN_WINDOW_MINUTES ?? 15),
	perAccount: Number(process.env.SIGNIN_MAX_PER_ACCOUNT ?? 5),
	perAddress: Number(process.env.SIGNIN_MAX_PER_ADDRESS ?? 30)
};

export type ThrottleVerdict = { allowed: true } | { allowed: false; message: string };

export async function checkSignInThrottle(email: string, ip: string): Promise<ThrottleVerdict> {
	const since = new Date(Date.now() - throttleLimits.windowMinutes * 60_000);
	const f = schema.signInFailures;
	const [[byAccount], [byAddress]] = await Promise.all([
		db()
			.select({ n: count() })
			.from(f)
			.where(and(eq(f.email, email.toLowerCase()), gt(f.at, since))),
		db()
			.select({ n: count() })
			.from(f)
			.where(and(eq(f.ip, ip), gt(f.at, since)))
	]);
	const minutes = throttleLimits.windowMinutes;
	if (byAccount.n >= throttleLimits.perAccount) {
		return {
			allowed: false,
			message: `Too many failed sign-ins for this account. Wait ${minutes} minutes, or reset your password.`
		};
	}
	if (byAddress.n >= throttleLimits.perAddress) {
		return {
			allowed: false,
			message: `Too many failed sign-ins from your address. Wait ${minutes} minutes.`
		};
	}
	return { allowed: true };
}

export async function recordSignInFailure(email: string, ip: string): Promise<void> {
	const f = schema.signInFailures;
	await db().insert(f).values({ email: email.toLowerCase(), ip });
	// keep the table small
	await db()
		.delete(f)
		.where(lt(f.at, new Date(Date.now() - 24 * 3600_000)));
}

export async function clearSignInFailures(email: string): Promise<void> {
	await db()
		.delete(schema.signInFailures)
		.where(eq(schema.signInFailures.email, email.toLowerCase()));
}
