/** The live endpoint's view of people and runs, from PostgreSQL. */
import { validateSession } from '../../src/lib/server/auth/sessions';
import { getRun, listRuns } from '../../src/lib/server/ingest/read';
import type { LiveRunInfo, LiveRunState } from '../../src/lib/viewer/live-protocol';
import type { LiveDirectory } from './endpoint';

type RunRow = NonNullable<Awaited<ReturnType<typeof getRun>>> & Record<string, unknown>;

function info(row: RunRow): LiveRunInfo {
	return {
		id: String(row.id),
		name: String(row.name),
		rig: String(row.rig_name),
		state: row.status as LiveRunState,
		state_fields: row.state_fields as string[],
		measurement_fields: row.measurement_fields as string[],
		coords: row.coords as 'world' | 'ego',
		first_t: row.first_t,
		last_t: row.last_t,
		frames: Number(row.frame_count)
	};
}

export const postgresLiveDirectory: LiveDirectory = {
	async authenticate(sessionId) {
		const found = await validateSession(sessionId);
		return found
			? { sessionId: found.session.id, userId: found.user.id, role: found.user.role }
			: null;
	},
	async findRun(runId) {
		const row = await getRun(runId);
		return row ? info(row) : null;
	},
	async liveRuns() {
		const { runs } = await listRuns({ status: 'live', limit: 200, offset: 0 });
		return runs.map(info);
	}
};
