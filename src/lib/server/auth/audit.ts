import { db, schema } from '$server/db';

export interface Actor {
	id: string | null;
	label: string;
	ip?: string | null;
}

export const systemActor: Actor = { id: null, label: 'system' };

export async function audit(
	actor: Actor,
	action: string,
	target: string | null = null,
	details: Record<string, unknown> | null = null
): Promise<void> {
	await db()
		.insert(schema.auditLog)
		.values({
			actorId: actor.id,
			actorLabel: actor.label,
			action,
			target,
			ip: actor.ip ?? null,
			details
		});
}
