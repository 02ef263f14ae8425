/**
 * What the ingest store keeps per open run between batches: the run's fields and metric settings (re-read
 * after SETTINGS_TTL_MS, so a settings save reaches live runs), the feed key, and how far it committed.
 */
import type postgres from 'postgres';
import type { Run } from '$lib/api-types';
import { defaultMetricSettings, type MetricSettings } from '$lib/metrics';
import type { Coords } from '$lib/runs';
import { SETTINGS_TTL_MS } from '$server/metrics/settings';

export interface RunContext {
	stateFields: string[];
	measurementFields: string[];
	coords: Coords;
	settings: MetricSettings;
	keyId: string | null;
	/** when settings were last read: they are re-read after SETTINGS_TTL_MS, so a settings save reaches live runs */
	settingsReadAt: number;
	/** 1 + the highest seq known stored or quarantined for the run; null when unknown */
	committedNext: number | null;
}

/** The fields of a run a context is made from. */
type RunContextRow = Pick<
	Run,
	'id' | 'state_fields' | 'measurement_fields' | 'coords' | 'metric_settings'
>;

export class RunCache {
	#sql: postgres.Sql;
	#runs = new Map<string, RunContext>();

	constructor(sql: postgres.Sql) {
		this.#sql = sql;
	}

	/** The context of a run just opened on a connection using `keyId`. */
	opened(row: RunContextRow, keyId: string, committedNext: number): void {
		this.#runs.set(row.id, contextOf(row, keyId, committedNext));
	}

	/** The context if the run is cached, without reading anything. */
	peek(runId: string): RunContext | undefined {
		return this.#runs.get(runId);
	}

	/** The run's context, read from the database when not cached, its settings re-read when stale. */
	async get(runId: string): Promise<RunContext> {
		let ctx = this.#runs.get(runId);
		if (!ctx) {
			const [row] = await this.#sql<RunContextRow[]>`select * from runs where id = ${runId}`;
			ctx = contextOf(row, null, null);
			this.#runs.set(runId, ctx);
		} else if (Date.now() - ctx.settingsReadAt > SETTINGS_TTL_MS) {
			const [row] = await this.#sql<
				Pick<RunContextRow, 'metric_settings'>[]
			>`select metric_settings from runs where id = ${runId}`;
			ctx.settings = storedSettings(row?.metric_settings ?? null);
			ctx.settingsReadAt = Date.now();
		}
		return ctx;
	}

	forget(runId: string): void {
		this.#runs.delete(runId);
	}
}

function contextOf(
	row: RunContextRow,
	keyId: string | null,
	committedNext: number | null
): RunContext {
	return {
		stateFields: row.state_fields,
		measurementFields: row.measurement_fields,
		coords: row.coords,
		settings: storedSettings(row.metric_settings),
		keyId,
		settingsReadAt: Date.now(),
		committedNext
	};
}

/** Settings are stored only after checkSettings passed (or as the defaults), so ingest takes them as they are. */
function storedSettings(stored: Run['metric_settings']): MetricSettings {
	return (stored as MetricSettings | null) ?? defaultMetricSettings;
}
