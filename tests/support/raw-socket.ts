/**
 * Raw HTTP upgrade requests and hand-built WebSocket frames over plain TCP, for sending what a
 * well-behaved client library never would (broken headers, unmasked or oversize frames, invalid UTF-8).
 */
import { connect, type Socket } from 'node:net';

/** One header line; the value is written byte for byte (latin1), so it may hold any byte. */
export type RawHeader = [name: string, value: string];

export function rawRequest(method: string, path: string, headers: RawHeader[]): Buffer {
	const lines = [`${method} ${path} HTTP/1.1`, ...headers.map(([k, v]) => `${k}: ${v}`)];
	return Buffer.from(`${lines.join('\r\n')}\r\n\r\n`, 'latin1');
}

export interface RawAnswer {
	/** null when the server closed (or the wait ran out) without a status line */
	status: number | null;
	/** the status line and headers as received */
	head: string;
	/** what came after the head (the body of a refusal, or the first WebSocket bytes) */
	rest: Buffer;
	/** open after a 101, for sending frames; destroyed otherwise */
	socket: Socket;
	/** true when the wait ran out */
	timedOut: boolean;
}

/**
 * Connects, writes `bytes` and waits for the response head. A refusal's body is read until the server
 * closes (or `ms` runs out); after a 101 the socket is handed back open.
 */
export function exchange(port: number, bytes: Buffer, ms = 5000): Promise<RawAnswer> {
	return new Promise((resolve) => {
		const socket = connect({ port, host: '127.0.0.1' });
		let buf = Buffer.alloc(0);
		let headEnd = -1;
		let done = false;
		const finish = (timedOut: boolean) => {
			if (done) return;
			done = true;
			clearTimeout(timer);
			const head = headEnd < 0 ? '' : buf.subarray(0, headEnd).toString('latin1');
			const m = /^HTTP\/1\.[01] (\d{3})/.exec(head);
			const status = m ? Number(m[1]) : null;
			const rest = headEnd < 0 ? Buffer.alloc(0) : buf.subarray(headEnd + 4);
			socket.removeAllListeners('data');
			if (status !== 101) socket.destroy();
			resolve({ status, head, rest, socket, timedOut });
		};
		let timer = setTimeout(() => finish(true), ms);
		socket.on('error', () => finish(false));
		socket.on('close', () => finish(false));
		socket.on('data', (chunk: Buffer) => {
			buf = Buffer.concat([buf, chunk]);
			if (headEnd >= 0) return;
			headEnd = buf.indexOf('\r\n\r\n');
			if (headEnd < 0) return;
			if (/^HTTP\/1\.[01] 101/.test(buf.toString('latin1', 0, 16))) return finish(false);
			// a refusal closes after its one-line body; a page answer may keep the connection open
			clearTimeout(timer);
			timer = setTimeout(() => finish(false), 300);
		});
		socket.write(bytes);
	});
}

export interface FrameSpec {
	fin?: boolean;
	/** the three reserved bits, 0–7 */
	rsv?: number;
	opcode: number;
	payload: Buffer;
	/** clients must mask; default true */
	mask?: boolean;
	/** a payload length to announce instead of the real one */
	announce?: bigint;
	maskKey?: Buffer;
}

/** One WebSocket frame as RFC 6455 §5.2 lays it out. */
export function wsFrame(f: FrameSpec): Buffer {
	const mask = f.mask ?? true;
	const len = f.announce ?? BigInt(f.payload.length);
	const parts: Buffer[] = [
		Buffer.from([((f.fin ?? true) ? 0x80 : 0) | ((f.rsv ?? 0) << 4) | f.opcode])
	];
	const m = mask ? 0x80 : 0;
	if (len < 126n) parts.push(Buffer.from([m | Number(len)]));
	else if (len < 65536n) {
		const b = Buffer.alloc(3);
		b[0] = m | 126;
		b.writeUInt16BE(Number(len), 1);
		parts.push(b);
	} else {
		const b = Buffer.alloc(9);
		b[0] = m | 127;
		b.writeBigUInt64BE(len, 1);
		parts.push(b);
	}
	if (mask) {
		const key = f.maskKey ?? Buffer.from([0x12, 0x34, 0x56, 0x78]);
		parts.push(key, Buffer.from(f.payload.map((byte, i) => byte ^ key[i % 4])));
	} else parts.push(f.payload);
	return Buffer.concat(parts);
}

/** The close code of the first close frame in `bytes` (server frames are unmasked), or null. */
export function closeCodeIn(bytes: Buffer): number | null {
	let at = 0;
	while (at + 2 <= bytes.length) {
		const opcode = bytes[at] & 0x0f;
		let len = bytes[at + 1] & 0x7f;
		let start = at + 2;
		if (len === 126) {
			len = bytes.readUInt16BE(at + 2);
			start = at + 4;
		} else if (len === 127) {
			len = Number(bytes.readBigUInt64BE(at + 2));
			start = at + 10;
		}
		if (opcode === 8) return len >= 2 ? bytes.readUInt16BE(start) : 1005;
		at = start + len;
	}
	return null;
}

/** Everything the server sends on `socket` until it closes or `ms` passes. */
export function readUntilClosed(socket: Socket, first: Buffer, ms: number): Promise<Buffer> {
	return new Promise((resolve) => {
		let buf = first;
		const end = () => {
			clearTimeout(timer);
			socket.destroy();
			resolve(buf);
		};
		const timer = setTimeout(end, ms);
		socket.on('data', (chunk: Buffer) => (buf = Buffer.concat([buf, chunk])));
		socket.on('close', end);
		socket.on('error', end);
	});
}

/** Writes `bytes`, then after `ms` resets the connection (TCP RST) without reading anything. */
export function slam(port: number, bytes: Buffer, ms: number): Promise<void> {
	return new Promise((resolve) => {
		const socket = connect({ port, host: '127.0.0.1' }, () => {
			socket.write(bytes);
			setTimeout(() => {
				socket.resetAndDestroy();
				resolve();
			}, ms);
		});
		socket.on('error', () => resolve());
	});
}
