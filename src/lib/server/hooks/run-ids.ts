import { error, json, type Handle } from '@sveltejs/kit';
import { uuidField } from '$lib/validation/rigs';

/**
 * Runs are addressed by UUID, but their routes share the `[id=id]` matcher that also admits Skein's 20-character
 * ids; such an id would reach PostgreSQL's uuid type and fail there (a 500). Answer 404 before any load runs.
 */
export const runIds: Handle = ({ event, resolve }) => {
	const route = event.route.id ?? '';
	const isRunRoute =
		route.startsWith('/api/runs/[id=id]') || route.startsWith('/(app)/runs/[id=id]');
	if (!isRunRoute || uuidField.safeParse(event.params.id).success) return resolve(event);
	if (route.startsWith('/api/'))
		return json({ error: { code: 'not_found', message: 'No such run' } }, { status: 404 });
	error(404, 'No such run');
};
