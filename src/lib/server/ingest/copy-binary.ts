/**
 * PostgreSQL's binary COPY format for frame rows: the packed sets go over the wire as raw bytes instead of
 * hex text, which halves the bytes sent and spares the app and the server the conversion (see bench:ingest).
 * Each row is written straight into one buffer, field by field, in the column order of `frameCopyColumns`.
 * Format: PostgreSQL documentation, "COPY — Binary Format".
 */
import type { FrameRow } from './frame-rows';

export const frameCopyColumns =
	'run_id, seq, t, ts, data, n_measurements, n_estimates, n_truth, expected_cardinality, cardinality_sd, gospa, gospa_localization, gospa_missed, gospa_false, ospa, nees_mean, nees_count, zones';

const FIELDS = 18;
const signature = Buffer.from('PGCOPY\n\xff\r\n\0', 'latin1');
/** milliseconds between the Unix epoch and PostgreSQL's epoch, 2000-01-01 */
const pgEpochMs = 946_684_800_000;

/** The stream's header: signature, flags (0) and header extension length (0). */
export function copyHeader(): Buffer {
	const header = Buffer.alloc(signature.length + 8);
	signature.copy(header, 0);
	return header;
}

/** The stream's trailer: a field count of −1. */
export function copyTrailer(): Buffer {
	const trailer = Buffer.alloc(2);
	trailer.writeInt16BE(-1, 0);
	return trailer;
}

/** The 16 bytes of a uuid in its text form. */
export function uuidBytes(uuid: string): Buffer {
	const hex = uuid.replaceAll('-', '');
	if (!/^[0-9a-fA-F]{32}$/.test(hex)) throw new TypeError(`not a uuid: ${uuid}`);
	return Buffer.from(hex, 'hex');
}

/** A 64-bit integer from a safe JavaScript integer, as two 32-bit halves (no BigInt per value). */
function writeInt64(buf: Buffer, value: number, o: number): number {
	const hi = Math.floor(value / 0x100000000);
	o = buf.writeInt32BE(hi, o);
	return buf.writeUInt32BE(value - hi * 0x100000000, o);
}

function writeInt4(buf: Buffer, value: number | null, o: number): number {
	if (value === null) return buf.writeInt32BE(-1, o);
	o = buf.writeInt32BE(4, o);
	return buf.writeInt32BE(value, o);
}

function writeFloat8(buf: Buffer, value: number | null, o: number): number {
	if (value === null) return buf.writeInt32BE(-1, o);
	o = buf.writeInt32BE(8, o);
	return buf.writeDoubleBE(value, o);
}

/** One frame row as a binary COPY tuple; `runId` is the row's run_id as uuidBytes gives it. */
export function frameTuple(runId: Buffer, row: FrameRow): Buffer {
	const zones = row.zones === null ? null : Buffer.from(JSON.stringify(row.zones));
	const data = row.data;
	// field count, 18 length words, uuid, int8, 3 × 8-byte values, bytea, 7 int4/float8 of at most 8 bytes…
	const size =
		2 + FIELDS * 4 + 16 + 8 * 3 + data.byteLength + 13 * 8 + (zones ? 1 + zones.length : 0);
	const buf = Buffer.allocUnsafe(size);
	let o = buf.writeInt16BE(FIELDS, 0);
	o = buf.writeInt32BE(16, o);
	o += runId.copy(buf, o);
	o = buf.writeInt32BE(8, o);
	o = writeInt64(buf, row.seq, o);
	o = writeFloat8(buf, row.t, o);
	// timestamptz: microseconds since 2000-01-01, of row.ts (a Date: whole milliseconds)
	o = buf.writeInt32BE(8, o);
	o = writeInt64(buf, (row.ts.getTime() - pgEpochMs) * 1000, o);
	o = buf.writeInt32BE(data.byteLength, o);
	buf.set(data, o);
	o += data.byteLength;
	o = writeInt4(buf, row.n_measurements, o);
	o = writeInt4(buf, row.n_estimates, o);
	o = writeInt4(buf, row.n_truth, o);
	o = writeFloat8(buf, row.expected_cardinality, o);
	o = writeFloat8(buf, row.cardinality_sd, o);
	o = writeFloat8(buf, row.gospa, o);
	o = writeFloat8(buf, row.gospa_localization, o);
	o = writeInt4(buf, row.gospa_missed, o);
	o = writeInt4(buf, row.gospa_false, o);
	o = writeFloat8(buf, row.ospa, o);
	o = writeFloat8(buf, row.nees_mean, o);
	o = writeInt4(buf, row.nees_count, o);
	if (zones === null) o = buf.writeInt32BE(-1, o);
	else {
		o = buf.writeInt32BE(zones.length + 1, o);
		o = buf.writeUInt8(1, o); // jsonb binary format version
		o += zones.copy(buf, o);
	}
	return buf.subarray(0, o);
}
