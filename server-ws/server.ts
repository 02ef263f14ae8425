/**
 * Production entry: adapter-node's handler and Skein's sockets on one HTTP server — one process,
 * one port, one origin. Run with `node --import tsx server-ws/server.ts` after `vite build`.
 */
import http from 'node:http';
import type { TLSSocket } from 'node:tls';
import { securityHeaders } from '../src/lib/server/security-headers';
import { attachSockets } from './attach';

const port = Number(process.env.PORT ?? 3000);
const host = process.env.HOST ?? '127.0.0.1';

// Without ORIGIN, adapter-node would assume https; tell it the scheme the request really came over.
const protoHeader = 'x-skein-proto';
if (!process.env.ORIGIN) {
	process.env.PROTOCOL_HEADER ??= protoHeader;
	process.env.HOST_HEADER ??= 'host';
}

const { handler } = (await import(new URL('../build/handler.js', import.meta.url).href)) as {
	handler: http.RequestListener;
};

const server = http.createServer((req, res) => {
	for (const [name, value] of Object.entries(securityHeaders)) res.setHeader(name, value);
	if (!process.env.ORIGIN && process.env.PROTOCOL_HEADER === protoHeader) {
		req.headers[protoHeader] = (req.socket as TLSSocket).encrypted ? 'https' : 'http';
	}
	handler(req, res);
});
const sockets = attachSockets(server);

server.listen(port, host, () => {
	console.log(`Skein listening on http://${host}:${port}`);
});

function shutdown() {
	server.close();
	void Promise.resolve(sockets?.close?.()).finally(() => process.exit(0));
	setTimeout(() => process.exit(0), 3000).unref();
}
process.on('SIGTERM', shutdown);
process.on('SIGINT', shutdown);
