/**
 * Background metric jobs on pg-boss (its own schema in Skein's database). The process that should
 * do the work calls startMetricJobs once; any process may enqueue, and one that has not started
 * the jobs starts pg-boss without a worker on first use.
 */
import PgBoss from 'pg-boss';
import type { MetricSettings } from '$lib/metrics';
import { logger } from '$server/log';
import { recomputeRun } from './recompute';
import { markFailed, saveSettings } from './settings';

export const RECOMPUTE_QUEUE = 'skein-metrics-recompute';

export interface RecomputeJob {
	runId: string;
	version: number;
}

let booting: Promise<PgBoss> | undefined;
let workerId: string | undefined;

function databaseUrl(url?: string): string {
	const u = url ?? process.env.DATABASE_URL;
	if (!u) throw new Error('DATABASE_URL is not set');
	return u;
}

function boss(url?: string): Promise<PgBoss> {
	booting ??= (async () => {
		const b = new PgBoss({
			connectionString: databaseUrl(url),
			max: 3,
			application_name: 'skein-jobs'
		});
		b.on('error', (err) => logger.error({ err }, 'metric jobs: pg-boss error'));
		await b.start();
		await b.createQueue(RECOMPUTE_QUEUE, {
			name: RECOMPUTE_QUEUE,
			retryLimit: 2,
			retryDelay: 5,
			expireInSeconds: 3600
		});
		return b;
	})();
	booting.catch(() => (booting = undefined));
	return booting;
}

async function work([job]: PgBoss.Job<RecomputeJob>[]): Promise<void> {
	const { runId, version } = job.data;
	try {
		const outcome = await recomputeRun(runId, version);
		logger.info({ runId, version, outcome }, 'metric recompute');
	} catch (err) {
		logger.error({ err, runId, version }, 'metric recompute failed');
		await markFailed(runId, version, err instanceof Error ? err.message : String(err));
		throw err;
	}
}

/** Starts pg-boss and this process's recompute worker; safe to call twice. */
export async function startMetricJobs(url?: string): Promise<void> {
	const b = await boss(url);
	workerId ??= await b.work<RecomputeJob>(RECOMPUTE_QUEUE, { pollingIntervalSeconds: 1 }, work);
}

/** Stops the worker (letting a running job finish, up to 30 s) and closes pg-boss's connections. */
export async function stopMetricJobs(): Promise<void> {
	const pending = booting;
	booting = undefined;
	workerId = undefined;
	if (!pending) return;
	const b = await pending.catch(() => undefined);
	await b?.stop({ graceful: true, wait: true, timeout: 30_000 });
}

/** Queues a recompute of the run's metric columns for settings version `version`. */
export async function enqueueRecompute(runId: string, version: number): Promise<void> {
	const b = await boss();
	await b.send(RECOMPUTE_QUEUE, { runId, version } satisfies RecomputeJob);
}

/** Saves a run's settings and queues the recompute they call for; a failure to queue is recorded on the run. */
export async function saveSettingsAndRecompute(
	runId: string,
	settings: MetricSettings
): Promise<void> {
	const version = await saveSettings(runId, settings);
	try {
		await enqueueRecompute(runId, version);
	} catch (err) {
		await markFailed(runId, version, 'could not queue the recompute');
		throw err;
	}
}
