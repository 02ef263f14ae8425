import { createHmac, randomBytes } from 'node:crypto';

/** A random secret with a readable kind prefix, e.g. `skt_…` for API tokens, `skf_…` for feed keys. */
export function newSecret(kind: 'skt' | 'skf' | 'ski' | 'skr'): string {
	return `${kind}_${randomBytes(24).toString('base64url')}`;
}

/**
 * Secrets made here carry 192 random bits, so a single fast keyed hash (HMAC-SHA-256) is enough: there is nothing
 * to brute-force, and a slow password hash would cost milliseconds on every rig connection and API call.
 * The key (SKEIN_SECRET_PEPPER) keeps a stolen table from being checked offline against guesses.
 */
export function hashSecret(secret: string): string {
	const pepper = process.env.SKEIN_SECRET_PEPPER ?? 'skein-local-pepper';
	return createHmac('sha256', pepper).update(secret).digest('hex');
}

export function secretPrefix(secret: string): string {
	return secret.slice(0, 10);
}

export function newId(): string {
	return randomBytes(15).toString('base64url');
}
