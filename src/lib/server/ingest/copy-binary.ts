/**
 * PostgreSQL's binary COPY format for frame rows: the packed sets go over the wire as raw bytes instead of
 * hex text, which halves the bytes sent and spares the app and the server the conversion (see bench:ingest).
 * Format: PostgreSQL documentation, "COPY — Binary Format".
 */

export type BinaryValue =
	| { kind: 'uuid'; value: string }
	| { kind: 'int8'; value: number }
	| { kind: 'int4'; value: number | null }
	| { kind: 'float8'; value: number | null }
	| { kind: 'timestamptz'; value: Date }
	| { kind: 'bytea'; value: Uint8Array }
	| { kind: 'jsonb'; value: string | null };

const signature = Buffer.from('PGCOPY\n\xff\r\n\0', 'latin1');
/** microseconds between the Unix epoch and PostgreSQL's epoch, 2000-01-01 */
const pgEpochUs = 946_684_800_000_000n;

export class BinaryCopyWriter {
	#chunks: Buffer[] = [];

	constructor() {
		const header = Buffer.alloc(signature.length + 8);
		signature.copy(header, 0);
		// flags (int32 0) and header extension length (int32 0) are already zero
		this.#chunks.push(header);
	}

	row(values: BinaryValue[]): void {
		let size = 2;
		for (const v of values) size += 4 + byteLength(v);
		const buf = Buffer.allocUnsafe(size);
		let o = buf.writeInt16BE(values.length, 0);
		for (const v of values) o = write(buf, o, v);
		this.#chunks.push(buf);
	}

	finish(): Buffer {
		const trailer = Buffer.alloc(2);
		trailer.writeInt16BE(-1, 0);
		this.#chunks.push(trailer);
		return Buffer.concat(this.#chunks);
	}
}

function byteLength(v: BinaryValue): number {
	switch (v.kind) {
		case 'uuid':
			return 16;
		case 'int8':
		case 'timestamptz':
			return 8;
		case 'int4':
			return v.value === null ? 0 : 4;
		case 'float8':
			return v.value === null ? 0 : 8;
		case 'bytea':
			return v.value.byteLength;
		case 'jsonb':
			return v.value === null ? 0 : 1 + Buffer.byteLength(v.value);
	}
}

function write(buf: Buffer, o: number, v: BinaryValue): number {
	switch (v.kind) {
		case 'uuid': {
			o = buf.writeInt32BE(16, o);
			const hex = v.value.replaceAll('-', '');
			if (!/^[0-9a-fA-F]{32}$/.test(hex)) throw new TypeError(`not a uuid: ${v.value}`);
			return o + buf.write(hex, o, 'hex');
		}
		case 'int8':
			o = buf.writeInt32BE(8, o);
			return buf.writeBigInt64BE(BigInt(v.value), o);
		case 'timestamptz':
			o = buf.writeInt32BE(8, o);
			return buf.writeBigInt64BE(BigInt(Math.round(v.value.getTime() * 1000)) - pgEpochUs, o);
		case 'int4':
			if (v.value === null) return buf.writeInt32BE(-1, o);
			o = buf.writeInt32BE(4, o);
			return buf.writeInt32BE(v.value, o);
		case 'float8':
			if (v.value === null) return buf.writeInt32BE(-1, o);
			o = buf.writeInt32BE(8, o);
			return buf.writeDoubleBE(v.value, o);
		case 'bytea':
			o = buf.writeInt32BE(v.value.byteLength, o);
			buf.set(v.value, o);
			return o + v.value.byteLength;
		case 'jsonb': {
			if (v.value === null) return buf.writeInt32BE(-1, o);
			const n = Buffer.byteLength(v.value);
			o = buf.writeInt32BE(n + 1, o);
			o = buf.writeUInt8(1, o); // jsonb binary format version
			return o + buf.write(v.value, o, 'utf8');
		}
	}
}
