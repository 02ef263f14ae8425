import { hash, verify } from '@node-rs/argon2';

/**
 * argon2id with OWASP's Password Storage Cheat Sheet parameters
 * (m = 19 MiB, t = 2, p = 1).
 */
const params = { memoryCost: 19456, timeCost: 2, parallelism: 1, outputLen: 32 } as const;

export const passwordRules = { min: 10, max: 256 } as const;

export function hashPassword(password: string): Promise<string> {
	return hash(password, params);
}

export async function verifyPassword(hashed: string | null, password: string): Promise<boolean> {
	if (!hashed) {
		// spend comparable time so unknown accounts are not told apart by timing
		await hash(password, params);
		return false;
	}
	try {
		return await verify(hashed, password);
	} catch {
		return false;
	}
}
