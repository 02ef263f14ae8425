/**
 * Per-run publish/subscribe between ingest and whoever watches a run live.
 * The in-process implementation is enough for one server process; a multi-process deployment
 * swaps in one backed by PostgreSQL LISTEN/NOTIFY or similar behind the same interface.
 */
import type { FrameMetrics } from '../src/lib/metrics/frame';
import type { Frame, IngestRunState } from '../src/lib/protocol/types';

export type RunEvent =
	/** `metrics`: the per-frame columns the store computed and committed; null when it computed none */
	| {
			kind: 'frame';
			runId: string;
			seq: number;
			t: number;
			frame: Frame;
			metrics: FrameMetrics | null;
	  }
	| { kind: 'quarantined'; runId: string; seq: number; reason: string }
	| { kind: 'state'; runId: string; state: IngestRunState };

export interface PubSub<M = RunEvent> {
	publish(runId: string, message: M): void;
	/** Returns the function that ends the subscription. */
	subscribe(runId: string, fn: (message: M) => void): () => void;
}

export function createInProcessPubSub<M = RunEvent>(
	onListenerError: (error: unknown) => void = () => {}
): PubSub<M> {
	const listeners = new Map<string, Set<(message: M) => void>>();
	return {
		publish(runId, message) {
			const set = listeners.get(runId);
			if (set === undefined) return;
			for (const fn of set) {
				// A failing viewer must never disturb ingest.
				try {
					fn(message);
				} catch (error) {
					onListenerError(error);
				}
			}
		},
		subscribe(runId, fn) {
			let set = listeners.get(runId);
			if (set === undefined) {
				set = new Set();
				listeners.set(runId, set);
			}
			set.add(fn);
			return () => {
				const current = listeners.get(runId);
				if (current === undefined) return;
				current.delete(fn);
				if (current.size === 0) listeners.delete(runId);
			};
		}
	};
}

const SHARED = Symbol.for('skein.pubsub.runs');

/**
 * The process-wide instance. Kept on globalThis because the socket server and the SvelteKit
 * bundle load their own copies of this module in production.
 */
export function sharedPubSub(): PubSub {
	const holder = globalThis as { [SHARED]?: PubSub };
	return (holder[SHARED] ??= createInProcessPubSub());
}
