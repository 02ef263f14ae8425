/**
 * What /healthz reports. Parts of the process register a probe for what they need to work; the socket side
 * (server-ws) is loaded apart from the SvelteKit build, with its own database pools, so the probes live on
 * globalThis, where the route of the build finds those of server-ws.
 */

/** A part's state: `problem` says what does not work, in one line; null when it works. */
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

async function run(probe: Probe): Promise<string | null> {
	let timer: ReturnType<typeof setTimeout> | undefined;
	const deadline = new Promise<string>((resolve) => {
		timer = setTimeout(
			() => resolve(`no answer within ${PROBE_DEADLINE_MS} ms`),
			PROBE_DEADLINE_MS
		);
	});
	try {
		return await Promise.race([
			probe().catch((err: unknown) => (err instanceof Error ? err.message : String(err))),
			deadline
		]);
	} finally {
		clearTimeout(timer);
	}
}

/** Runs every probe, `extra` ones first; each part is null (works) or what does not work. */
export async function checkHealth(extra: Record<string, Probe> = {}) {
	const all = [...Object.entries(extra), ...probes()];
	const results = await Promise.all(all.map(async ([name, p]) => [name, await run(p)] as const));
	return Object.fromEntries(results) as Record<string, string | null>;
}
