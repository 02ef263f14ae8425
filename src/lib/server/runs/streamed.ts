/** Writing streamed runs: opened (or found again) by ingest, moved between live, ended and interrupted. */
import { and, eq, inArray, lt, ne, not, sql } from 'drizzle-orm';
import type { Run } from '$lib/api-types';
import { defaultMetricSettings } from '$lib/metrics';
import type { IngestRunState, RunSpec } from '$lib/protocol/types';
import { db, schema } from '$server/db';
import { findRun } from './index';

const { runs } = schema;

/**
 * The rig's run with this client_run_id as it is (`resumed`), or a new live run. `clientRunId` null: always a
 * new run. Two connections of one rig opening the same run at once get the same run. `settingsText`: the run's
 * metric settings as jsonb text (null for none), read after the run, which ingest takes its settings from and
 * compares with what each commit reads under the run's row lock.
 */
export async function openStreamedRun(
	rigId: string,
	clientRunId: string | null,
	spec: RunSpec
): Promise<{ run: Run; resumed: boolean; settingsText: string | null }> {
	const opened = await openOrFind(rigId, clientRunId, spec);
	const [row] = await db()
		.select({ text: sql<string | null>`${runs.metricSettings}::text` })
		.from(runs)
		.where(eq(runs.id, opened.run.id));
	return { ...opened, settingsText: row?.text ?? null };
}

async function openOrFind(
	rigId: string,
	clientRunId: string | null,
	spec: RunSpec
): Promise<{ run: Run; resumed: boolean }> {
	const byClientId = (id: string) => findRun(and(eq(runs.rigId, rigId), eq(runs.clientRunId, id)));
	if (clientRunId !== null) {
		const found = await byClientId(clientRunId);
		if (found) return { run: found, resumed: true };
	}
	const [inserted] = await db()
		.insert(runs)
		.values({
			rigId,
			clientRunId,
			name: spec.name,
			stateFields: spec.state_fields,
			measurementFields: spec.measurement_fields,
			coords: spec.coords ?? 'world',
			lengthUnit: spec.units?.length ?? 'm',
			tags: spec.tags ?? [],
			notes: spec.notes ?? '',
			status: 'live',
			metricSettings: { ...defaultMetricSettings }
		})
		.onConflictDoNothing({ target: [runs.rigId, runs.clientRunId] })
		.returning({ id: runs.id });
	if (inserted) return { run: (await findRun(eq(runs.id, inserted.id)))!, resumed: false };
	// only a client_run_id conflicts: opened concurrently by another connection of the same rig
	return { run: (await byClientId(clientRunId!))!, resumed: true };
}

/** live again (resumed), or ended / interrupted; an imported run's state is never changed. */
export async function setStreamedRunState(runId: string, state: IngestRunState): Promise<void> {
	if (state === 'live') {
		await db()
			.update(runs)
			.set({ status: 'live', endedAt: null, lastSeenAt: sql`now()` })
			.where(eq(runs.id, runId));
	} else {
		await db()
			.update(runs)
			.set({ status: state, endedAt: sql`coalesce(${runs.endedAt}, now())` })
			.where(and(eq(runs.id, runId), ne(runs.status, 'imported')));
	}
}

/** Runs left live by a previous process (crash, restart) whose rig has been silent for `graceMs` become interrupted. */
export async function interruptAbandonedRuns(graceMs: number, streaming: string[]): Promise<void> {
	await db()
		.update(runs)
		.set({ status: 'interrupted', endedAt: sql`coalesce(${runs.endedAt}, now())` })
		.where(
			and(
				eq(runs.status, 'live'),
				lt(
					sql`coalesce(${runs.lastSeenAt}, ${runs.startedAt})`,
					sql`now() - ${graceMs / 1000} * interval '1 second'`
				),
				streaming.length ? not(inArray(runs.id, streaming)) : undefined
			)
		);
}
