/**
 * Row preparation: each frame's metric columns and COPY tuple, computed in the row worker pool (or inline
 * when it is off or unusable), started as the frame arrives so it overlaps the previous batch's commit.
 */
import type { FrameToStore } from './contract';
import { frameTuple, uuidBytes } from './copy-binary';
import { cardinalitySd, frameMetricsFor, rowOf } from './frame-rows';
import { RowPool, type PreparedRow } from './row-pool';
import type { RunContext } from './run-cache';

/** A frame's row, and the run's metric settings (as stored text, RunContext.settingsText) it is computed with. */
export interface RowFor {
	row: PreparedRow;
	settingsText: string;
}

interface Pending {
	row: Promise<PreparedRow>;
	settingsText: string;
}

export class RowPreparer {
	#prepared = new WeakMap<FrameToStore, Pending>();
	#pool: RowPool | null;
	#metricColumns = process.env.INGEST_METRIC_COLUMNS !== 'off';

	/** `rowWorker`: compute rows in a worker thread; false computes them inline. */
	constructor(rowWorker: boolean) {
		this.#pool = rowWorker ? new RowPool() : null;
	}

	/** Starts the frame's row unless it is already started. */
	start(runId: string, frame: FrameToStore, ctx: RunContext): void {
		if (!this.#prepared.has(frame)) this.#prepared.set(frame, this.#pending(runId, frame, ctx));
	}

	/** The frame's row: the one started for it, or computed now. */
	row(runId: string, frame: FrameToStore, ctx: RunContext): Promise<RowFor> {
		return settled(this.#prepared.get(frame) ?? this.#pending(runId, frame, ctx));
	}

	/** The frame's row computed again, with the context's settings now (after a settings save). */
	again(runId: string, frame: FrameToStore, ctx: RunContext): Promise<RowFor> {
		return settled(this.#pending(runId, frame, ctx));
	}

	#pending(runId: string, frame: FrameToStore, ctx: RunContext): Pending {
		return { row: this.#prepare(runId, frame, ctx), settingsText: ctx.settingsText };
	}

	#prepare(runId: string, f: FrameToStore, ctx: RunContext): Promise<PreparedRow> {
		const rowCtx = {
			stateFields: ctx.stateFields,
			settings: ctx.settings,
			coords: ctx.coords,
			metrics: this.#metricColumns
		};
		if (this.#pool === null || !this.#pool.usable) {
			const metrics = frameMetricsFor(f.frame, rowCtx);
			const sd = cardinalitySd(f.frame);
			f.metrics = metrics;
			const tuple = frameTuple(uuidBytes(runId), rowOf(runId, f, metrics, sd));
			return Promise.resolve({ tuple, metrics, cardinalitySd: sd });
		}
		const dims = { stateDim: ctx.stateFields.length, measDim: ctx.measurementFields.length };
		const prepared = this.#pool.prepare(runId, rowCtx, dims, f).then((p) => {
			f.metrics = p.metrics;
			return p;
		});
		// a batch dropped after a failed commit is never awaited: its failure must not go unhandled
		prepared.catch(() => {});
		return prepared;
	}
}

async function settled(p: Pending): Promise<RowFor> {
	return { row: await p.row, settingsText: p.settingsText };
}
