/** A run's metric settings and the state of the recompute a settings change starts. */
import type { RecomputeState, RecomputeStatus } from '$lib/api-types';
import { parseMetricSettings, type MetricSettings } from '$lib/metrics';
import { sqlClient } from '$server/db';

export async function recomputeStatus(runId: string): Promise<RecomputeStatus> {
	const sql = sqlClient();
	const [row] = await sql<
		{
			state: Exclude<RecomputeState, 'idle'>;
			progress: number;
			error: string | null;
			updated_ms: number;
		}[]
	>`
		select state, progress, error, (extract(epoch from updated_at) * 1000)::float8 as updated_ms
		from metric_recomputes where run_id = ${runId}`;
	if (!row) return { state: 'idle', progress: 0 };
	return {
		state: row.state,
		progress: Math.round(row.progress * 10) / 10,
		...(row.error ? { error: row.error } : {}),
		updated_at: new Date(row.updated_ms).toISOString()
	};
}

/**
 * Checks settings against the run's state fields. Problems come back keyed by field path
 * (`zones.0.x`, `weights`, …), the shape API errors and forms use.
 */
export function checkSettings(
	input: unknown,
	stateFields: readonly string[]
): { ok: true; settings: MetricSettings } | { ok: false; errors: Record<string, string> } {
	const parsed = parseMetricSettings(input, stateFields);
	if (parsed.ok) return parsed;
	const errors: Record<string, string> = {};
	for (const line of parsed.errors) {
		const at = line.indexOf(': ');
		const path = at < 0 ? '_' : line.slice(0, at);
		errors[path === '(settings)' ? '_' : path] ??= at < 0 ? line : line.slice(at + 2);
	}
	return { ok: false, errors };
}

/**
 * Saves the settings and marks a recompute queued under a new version, in one transaction.
 * Returns the version the recompute job must carry.
 */
export async function saveSettings(runId: string, settings: MetricSettings): Promise<number> {
	const sql = sqlClient();
	return sql.begin(async (tx) => {
		await tx`update runs set metric_settings = ${JSON.stringify(settings)}::text::jsonb where id = ${runId}`;
		const [row] = await tx<{ version: number }[]>`
			insert into metric_recomputes (run_id) values (${runId})
			on conflict (run_id) do update set version = metric_recomputes.version + 1, state = 'queued', progress = 0,
				error = null, settings_saved_at = now(), updated_at = now()
			returning version`;
		return row.version;
	});
}

export async function markFailed(runId: string, version: number, message: string): Promise<void> {
	await sqlClient()`update metric_recomputes set state = 'failed', error = ${message}, updated_at = now()
		where run_id = ${runId} and version = ${version}`;
}
