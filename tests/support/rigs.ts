import { randomBytes } from 'node:crypto';
import { SkeinRigClient, type FrameInput } from '$lib/protocol/client';
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

/** A run with these frames (2-D state and measurements), streamed through the real ingest socket; its id. */
export async function streamRun(
	appUrl: string,
	tag: string,
	frames: FrameInput[]
): Promise<string> {
	const rig = await makeRigWithKey(tag);
	const client = new SkeinRigClient({
		url: appUrl.replace('http', 'ws') + '/ingest/v1',
		key: rig.secret,
		clientRunId: rig.rigName,
		run: { name: tag, state_fields: ['x', 'y'], measurement_fields: ['x', 'y'] }
	});
	const { runId } = await client.start();
	for (const f of frames) client.send(f);
	await client.close();
	return runId;
}
