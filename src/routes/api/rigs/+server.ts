import { json } from '@sveltejs/kit';
import { createRigSchema } from '$lib/validation/rigs';
import { actorOf, readJson } from '$server/api';
import { createRig, getRig, listRigs } from '$server/rigs';
import { rigsEndpoint } from '$server/rigs/http';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = rigsEndpoint(async () => json({ rigs: await listRigs() }));

export const POST: RequestHandler = rigsEndpoint(async ({ request, locals, getClientAddress }) => {
	const input = await readJson(request, createRigSchema);
	const rig = await createRig(actorOf(locals, getClientAddress()), input);
	return json({ rig: await getRig(rig.id) }, { status: 201 });
});
