/** The live endpoint's view of people and runs, from PostgreSQL. */
import type { Run } from '../../src/lib/api-types';
import type { LiveRunInfo } from '../../src/lib/protocol/live';
import { validateSession } from '../../src/lib/server/auth/sessions';
import { getRun, listRuns } from '../../src/lib/server/runs';
import type { LiveDirectory } from './endpoint';

function info(run: Run): LiveRunInfo {
	return {
		id: run.id,
		name: run.name,
		rig: run.rig_name,
		state: run.status,
		state_fields: run.state_fields,
		measurement_fields: run.measurement_fields,
		coords: run.coords,
		first_t: run.first_t,
		last_t: run.last_t,
		frames: run.frame_count
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
		const run = await getRun(runId);
		return run ? info(run) : null;
	},
	async liveRuns() {
		const { runs } = await listRuns({ status: 'live', limit: 200, offset: 0 });
		return runs.map(info);
	}
};
