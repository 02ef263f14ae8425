import { randomBytes } from 'node:crypto';
import { hashSecret, newSecret, secretPrefix } from '$server/auth/tokens';
import { sqlClient } from '$server/db';

/** A rig with one active feed key, made straight in the database. */
export async function makeRigWithKey(tag = 'rig', opts: { expiresAt?: Date } = {}) {
	const sql = sqlClient();
	const name = `${tag}-${randomBytes(4).toString('hex')}`;
	const [rig] = await sql<{ id: string }[]>`insert into rigs (name) values (${name}) returning id`;
	const secret = newSecret('skf');
	const [key] = await sql<{ id: string }[]>`
		insert into feed_keys (rig_id, label, prefix, key_hash, expires_at)
		values (${rig.id}, 'test', ${secretPrefix(secret)}, ${hashSecret(secret)}, ${opts.expiresAt?.toISOString() ?? null}::timestamptz) returning id`;
	return { rigId: rig.id, rigName: name, keyId: key.id, secret };
}
