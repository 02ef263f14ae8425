import type { Plugin } from 'vite';

/**
 * Mounts Skein's WebSocket endpoints (ingest, live) on Vite's dev server.
 * Only upgrade requests for Skein's own paths are taken; Vite's HMR socket is left alone.
 */
export function skeinSockets(): Plugin {
	return {
		name: 'skein-sockets',
		apply: 'serve',
		async configureServer(server) {
			if (!server.httpServer) return;
			const { attachSockets } = await server.ssrLoadModule('/server-ws/attach.ts');
			attachSockets(server.httpServer);
		}
	};
}
