import { desc, lt } from 'drizzle-orm';
import { db, schema } from '$server/db';

export async function readAudit(limit: number, before?: number) {
	const a = schema.auditLog;
	const q = db()
		.select({
			id: a.id,
			at: a.at,
			actor: a.actorLabel,
			action: a.action,
			target: a.target,
			ip: a.ip,
			details: a.details
		})
		.from(a)
		.orderBy(desc(a.id))
		.limit(limit);
	return before ? q.where(lt(a.id, before)) : q;
}
