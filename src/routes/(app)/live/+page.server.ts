import { quietTile } from '$lib/protocol/live';
import { listRuns } from '$server/runs';
import type { PageServerLoad } from './$types';

/** The live runs as they stand, so the board renders its tiles (or its empty state) before the socket opens. */
export const load = (async () => {
	const { runs } = await listRuns({ status: 'live', limit: 200, offset: 0 });
	return {
		runs: runs.map((run) =>
			quietTile({
				id: run.id,
				name: run.name,
				rig: run.rig_name,
				state: 'live',
				last_t: run.last_t,
				frames: run.frame_count
			})
		)
	};
}) satisfies PageServerLoad;
