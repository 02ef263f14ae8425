import type { Server } from 'node:http';

/** Attaches Skein's socket endpoints to an HTTP server. Filled in by the ingest work. */
export function attachSockets(_server: Server): void {}
