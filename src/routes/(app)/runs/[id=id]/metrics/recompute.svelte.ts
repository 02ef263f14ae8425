/** Follows a run's metric recompute by polling the settings endpoint while one is queued or running. */
import type { RecomputeStatus, RunSettingsResponse } from '$lib/api-types';

export class RecomputeWatch {
	status = $state<RecomputeStatus>({ state: 'idle', progress: 0 });
	readonly active = $derived(this.status.state === 'queued' || this.status.state === 'running');
	#runId: string;
	#timer: ReturnType<typeof setTimeout> | undefined;
	#destroyed = false;
	#onDone: () => void;

	constructor(runId: string, initial: RecomputeStatus, onDone: () => void) {
		this.#runId = runId;
		this.status = initial;
		this.#onDone = onDone;
		if (this.active) this.#schedule();
	}

	/** Call after a save: the server has queued a new recompute. */
	follow(): void {
		this.status = { state: 'queued', progress: 0 };
		this.#schedule();
	}

	#schedule(): void {
		clearTimeout(this.#timer);
		if (!this.#destroyed) this.#timer = setTimeout(() => void this.#poll(), 1000);
	}

	async #poll(): Promise<void> {
		try {
			const res = await fetch(`/api/runs/${this.#runId}/settings`, {
				headers: { accept: 'application/json' }
			});
			if (res.ok) {
				const body = (await res.json()) as RunSettingsResponse;
				const was = this.active;
				this.status = body.recompute;
				if (was && this.status.state === 'done') this.#onDone();
			}
		} catch {
			// offline for a moment: try again on the next tick
		}
		if (this.active) this.#schedule();
	}

	destroy(): void {
		this.#destroyed = true;
		clearTimeout(this.#timer);
	}
}
