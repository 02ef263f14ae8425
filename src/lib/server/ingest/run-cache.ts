/**
 * What the ingest store keeps per open run between batches: the run's fields and metric settings (with their
 * stored text, which each commit checks under the run's row lock, so a settings save reaches live runs), the
 * feed key, and how far it committed.
 */
import type postgres from 'postgres';
import type { Run } from '$lib/api-types';
import { defaultMetricSettings, type MetricSettings } from '$lib/metrics';
import type { Coords } from '$lib/runs';

export interface RunContext {
	stateFields: string[];
	measurementFields: string[];
	coords: Coords;
	settings: MetricSettings;
	/** runs.metric_settings as jsonb text ('' for none) that `settings` were read from: tells a save apart */
	settingsText: string;
	keyId: string | null;
	/** 1 + the highest seq known stored or quarantined for the run; null when unknown */
	committedNext: number | null;
}

/** The fields of a run a context is made from. */
type RunContextRow = Pick<Run, 'id' | 'state_fields' | 'measurement_fields' | 'coords'>;

export class RunCache {
	#sql: postgres.Sql;
	#runs = new Map<string, RunContext>();

	constructor(sql: postgres.Sql) {
		this.#sql = sql;
	}

	/**
	 * The context of a run just opened on a connection using `keyId`; `settingsText` is its metric_settings as
	 * jsonb text (null for none), which the settings are taken from.
	 */
	opened(
		row: RunContextRow,
		settingsText: string | null,
		keyId: string,
		committedNext: number
	): void {
		this.#runs.set(row.id, contextOf(row, settingsText, keyId, committedNext));
	}

	/** The context if the run is cached, without reading anything. */
	peek(runId: string): RunContext | undefined {
		return this.#runs.get(runId);
	}

	/** The run's context, read from the database when not cached. */
	async get(runId: string): Promise<RunContext> {
		let ctx = this.#runs.get(runId);
		if (!ctx) {
			const [row] = await this.#sql<(RunContextRow & { settings_text: string | null })[]>`
				select id, state_fields, measurement_fields, coords, metric_settings::text as settings_text
				from runs where id = ${runId}`;
			ctx = contextOf(row, row.settings_text, null, null);
			this.#runs.set(runId, ctx);
		}
		return ctx;
	}

	forget(runId: string): void {
		this.#runs.delete(runId);
	}
}

/** Takes the run's metric settings as read now (jsonb text, null for none) unless they are the ones it has. */
export function adoptSettings(ctx: RunContext, settingsText: string | null): void {
	const text = settingsText ?? '';
	if (text === ctx.settingsText) return;
	ctx.settings = storedSettings(text);
	ctx.settingsText = text;
}

function contextOf(
	row: RunContextRow,
	settingsText: string | null,
	keyId: string | null,
	committedNext: number | null
): RunContext {
	return {
		stateFields: row.state_fields,
		measurementFields: row.measurement_fields,
		coords: row.coords,
		settings: storedSettings(settingsText ?? ''),
		settingsText: settingsText ?? '',
		keyId,
		committedNext
	};
}

/** Settings are stored only after checkSettings passed (or as the defaults), so ingest takes them as they are. */
function storedSettings(text: string): MetricSettings {
	return text === '' ? defaultMetricSettings : (JSON.parse(text) as MetricSettings);
}
