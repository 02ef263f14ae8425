import type { Server } from 'node:http';

export interface AttachedSockets {
	close(): Promise<void>;
}

/** Attaches Skein's socket endpoints (ingest, live) to an HTTP server. */
export function attachSockets(_server: Server): AttachedSockets {
	return { close: async () => {} };
}
