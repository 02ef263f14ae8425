import { listRuns } from '$server/ingest/read';
import { quietTile } from '$lib/viewer/live-protocol';
import type { PageServerLoad } from './$types';

/** The live runs as they stand, so the board renders its tiles (or its empty state) before the socket opens. */
export const load = (async () => {
	const { runs } = await listRuns({ status: 'live', limit: 200, offset: 0 });
	return {
		runs: runs.map((r) => {
			const row = r as typeof r & Record<string, unknown>;
			return quietTile({
				id: String(row.id),
				name: String(row.name),
				rig: String(row.rig_name),
				state: 'live',
				last_t: row.last_t,
				frames: Number(row.frame_count)
			});
		})
	};
}) satisfies PageServerLoad;
