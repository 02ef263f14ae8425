/**
 * The live endpoint's statistics, registered by the socket server and read by the SvelteKit side
 * (GET /api/live). The two load separate copies of this module, so the registry is kept on globalThis.
 */
import type { LiveStats } from '$lib/api-types';

/** Where the socket server registers its live statistics, read by the SvelteKit side (another module copy). */
const LIVE_STATS_KEY = 'skein.live.stats';

export function readLiveStats(): LiveStats {
	const holder = globalThis as { [key: symbol]: (() => LiveStats)[] | undefined };
	const sources = holder[Symbol.for(LIVE_STATS_KEY)] ?? [];
	return { viewers: sources.flatMap((s) => s().viewers) };
}

export function registerLiveStats(source: () => LiveStats): () => void {
	const holder = globalThis as { [key: symbol]: (() => LiveStats)[] | undefined };
	const sources = (holder[Symbol.for(LIVE_STATS_KEY)] ??= []);
	sources.push(source);
	return () => {
		const i = sources.indexOf(source);
		if (i >= 0) sources.splice(i, 1);
	};
}
