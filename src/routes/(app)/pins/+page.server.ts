import { listAllPins } from '$server/pins';
import type { PageServerLoad } from './$types';

export const load = (async () => {
	const { total, pins } = await listAllPins(200, 0);
	return {
		total,
		pins: pins.map((p) => ({ ...p, created_at: new Date(p.created_at).toISOString() }))
	};
}) satisfies PageServerLoad;
