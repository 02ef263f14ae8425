import { createServer, connect, type Server, type Socket } from 'node:net';

/** A TCP relay on loopback whose connections can be cut at will, like a flaky link between rig and server. */
export class CuttableLink {
	#server: Server;
	#pairs = new Set<[Socket, Socket]>();
	port = 0;
	cuts = 0;

	constructor(private targetPort: number) {
		this.#server = createServer((inbound) => {
			const outbound = connect(this.targetPort, '127.0.0.1');
			const pair: [Socket, Socket] = [inbound, outbound];
			this.#pairs.add(pair);
			inbound.pipe(outbound);
			outbound.pipe(inbound);
			const drop = () => {
				inbound.destroy();
				outbound.destroy();
				this.#pairs.delete(pair);
			};
			inbound.on('error', drop).on('close', drop);
			outbound.on('error', drop).on('close', drop);
		});
	}

	listen(): Promise<number> {
		return new Promise((resolve) =>
			this.#server.listen(0, '127.0.0.1', () => {
				const a = this.#server.address();
				this.port = typeof a === 'object' && a ? a.port : 0;
				resolve(this.port);
			})
		);
	}

	/** Resets every open connection (both directions, no closing handshake). */
	cutAll(): number {
		let n = 0;
		for (const [a, b] of this.#pairs) {
			a.resetAndDestroy();
			b.resetAndDestroy();
			n++;
		}
		this.#pairs.clear();
		if (n) this.cuts++;
		return n;
	}

	close(): Promise<void> {
		this.cutAll();
		return new Promise((r) => this.#server.close(() => r()));
	}
}
