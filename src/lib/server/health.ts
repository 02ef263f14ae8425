/**
 * What /healthz reports. Parts of the process register a probe for what they need to work; the socket side
 * (server-ws) is loaded apart from the SvelteKit build, with its own database pools, so the probes live on
 * globalThis, where the route of the build finds those of server-ws.
 */
import { withDeadline } from './deadline';

/** A part's check: null when the part works, else one line saying what does not. */
export type Probe = () => Promise<string | null>;

const PROBES = Symbol.for('skein.health.probes');

function probes(): Map<string, Probe> {
	const holder = globalThis as { [PROBES]?: Map<string, Probe> };
	return (holder[PROBES] ??= new Map());
}

/** Registers (or replaces) the probe of a part, e.g. "ingest"; returns its removal. */
export function registerProbe(name: string, probe: Probe): () => void {
	probes().set(name, probe);
	return () => {
		if (probes().get(name) === probe) probes().delete(name);
	};
}

/** A probe that has not answered within this counts as failing: a wedged pool must not wedge /healthz. */
const PROBE_DEADLINE_MS = 2000;

function run(probe: Probe): Promise<string | null> {
	return withDeadline(probe(), PROBE_DEADLINE_MS, 'check').catch((err: unknown) =>
		err instanceof Error ? err.message : String(err)
	);
}

/** Runs every probe, `extra` ones first; each part is null (works) or what does not work. */
export async function checkHealth(extra: Record<string, Probe> = {}) {
	const all = [...Object.entries(extra), ...probes()];
	const results = await Promise.all(all.map(async ([name, p]) => [name, await run(p)] as const));
	return Object.fromEntries(results) as Record<string, string | null>;
}
