/**
 * The fast path for MessagePack frames: one pass over the bytes that validates a frame and reads only what
 * the per-frame metrics need, without building the whole message as JavaScript values.
 *
 * It is a filter in front of the general path (decodeMessage + validateFrame), never a second set of rules:
 * it returns a frame only when it is certain the general path would accept the message as a valid frame
 * with the same values, and null otherwise — an invalid frame, an open or close, or anything unusual
 * (duplicate keys, a float where an integer is expected, an integer beyond 2^53, long strings…). The
 * general path then decides and words the error. `frame-reader.test.ts` checks that contract on random
 * and mutated messages.
 */
import type { IngestLimits } from './limits';
import type { EgoPose } from './types';
import { asymmetricAt, T_MAX, T_MIN, type RunDims } from './validate';

/** An estimate as the metrics read it: the stored message keeps ids and labels. */
export interface ReadEstimate {
	x: number[];
	P?: number[];
	r?: number;
}

export interface ReadTruth {
	x: number[];
}

/** What the metrics need of a frame; absent sets stay undefined, reported empty ones have length 0. */
export interface ReadFrame {
	seq: number;
	t: number;
	ego?: EgoPose;
	/** only the count is read */
	measurements?: { length: number };
	estimates?: ReadEstimate[];
	truth?: ReadTruth[];
}

/** a valid frame map nests four containers deep (frame → set → item → vector) */
const FRAME_DEPTH = 4;

/** UTF-8 bytes of the keys a frame may use */
const K = {
	type: bytes('type'),
	seq: bytes('seq'),
	t: bytes('t'),
	ego: bytes('ego'),
	measurements: bytes('measurements'),
	estimates: bytes('estimates'),
	truth: bytes('truth'),
	x: bytes('x'),
	y: bytes('y'),
	heading: bytes('heading'),
	z: bytes('z'),
	sensor: bytes('sensor'),
	R: bytes('R'),
	id: bytes('id'),
	P: bytes('P'),
	r: bytes('r'),
	label: bytes('label'),
	frame: bytes('frame')
};

function bytes(s: string): Uint8Array {
	return new TextEncoder().encode(s);
}

let buf: Uint8Array = new Uint8Array(0);
let view: DataView = new DataView(buf.buffer);
let pos = 0;
let end = 0;
/** set by readNumber: false when the value at pos was not a number the general path reads the same way */
let numOk = true;
/** covariance scratch, row-major */
let scratch = new Float64Array(256);

/**
 * Validates a MessagePack frame message against the run's dimensions and limits and reads what the
 * metrics need. Null means "take the general path", not "invalid".
 */
export function readFrame(data: Uint8Array, dims: RunDims, limits: IngestLimits): ReadFrame | null {
	if (limits.maxDepth < FRAME_DEPTH || data.length === 0) return null;
	buf = data;
	view = new DataView(data.buffer, data.byteOffset, data.byteLength);
	pos = 0;
	end = data.length;
	try {
		const frame = readTop(dims, limits);
		return frame !== null && pos === end ? frame : null;
	} finally {
		buf = new Uint8Array(0);
	}
}

/** A container header: the fix form `fixLow`..`fixLow + 15`, or the 16- and 32-bit forms; its count, or -1. */
function header(fixLow: number, h16: number, h32: number): number {
	if (pos >= end) return -1;
	const b = buf[pos];
	if (b >= fixLow && b <= fixLow + 0x0f) {
		pos++;
		return b & 0x0f;
	}
	if (b === h16) {
		if (pos + 3 > end) return -1;
		const n = (buf[pos + 1] << 8) | buf[pos + 2];
		pos += 3;
		return n;
	}
	if (b === h32) {
		if (pos + 5 > end) return -1;
		const n = view.getUint32(pos + 1);
		pos += 5;
		return n;
	}
	return -1;
}

function mapHeader(): number {
	return header(0x80, 0xde, 0xdf);
}

function arrayHeader(): number {
	return header(0x90, 0xdc, 0xdd);
}

/** Reads a string header; returns its byte length and leaves pos at its first byte, or -1. */
function stringHeader(): number {
	if (pos >= end) return -1;
	const b = buf[pos];
	let n: number;
	if (b >= 0xa0 && b <= 0xbf) {
		n = b & 0x1f;
		pos++;
	} else if (b === 0xd9) {
		if (pos + 2 > end) return -1;
		n = buf[pos + 1];
		pos += 2;
	} else if (b === 0xda) {
		if (pos + 3 > end) return -1;
		n = (buf[pos + 1] << 8) | buf[pos + 2];
		pos += 3;
	} else if (b === 0xdb) {
		if (pos + 5 > end) return -1;
		n = view.getUint32(pos + 1);
		pos += 5;
	} else return -1;
	if (pos + n > end) return -1;
	return n;
}

/** Whether the string of `len` bytes at `start` is `key`. */
function keyIs(start: number, len: number, key: Uint8Array): boolean {
	if (len !== key.length) return false;
	for (let i = 0; i < len; i++) if (buf[start + i] !== key[i]) return false;
	return true;
}

let keyAt = 0;
let keyLen = 0;

/** Reads a map key (a string) and moves past it; false when it is not a string. */
function nextKey(): boolean {
	const len = stringHeader();
	if (len < 0) return false;
	keyAt = pos;
	keyLen = len;
	pos += len;
	return true;
}

/** Whether the key last read by nextKey is `key`. */
function isKey(key: Uint8Array): boolean {
	return keyIs(keyAt, keyLen, key);
}

/** bytes taken by a number starting with this byte (marker included); 0 for what is not a number */
const NUMBER_SIZE = new Uint8Array(256);
for (let b = 0; b <= 0x7f; b++) NUMBER_SIZE[b] = 1;
for (let b = 0xe0; b <= 0xff; b++) NUMBER_SIZE[b] = 1;
for (const [b, n] of [
	[0xca, 5],
	[0xcb, 9],
	[0xcc, 2],
	[0xcd, 3],
	[0xce, 5],
	[0xcf, 9],
	[0xd0, 2],
	[0xd1, 3],
	[0xd2, 5],
	[0xd3, 9]
])
	NUMBER_SIZE[b] = n;

/** A number exactly as msgpackr decodes it with int64AsType "number"; sets numOk = false otherwise. */
function readNumber(): number {
	const b = pos < end ? buf[pos] : 0xc1;
	const size = NUMBER_SIZE[b];
	if (size === 0 || pos + size > end) {
		numOk = false;
		return 0;
	}
	const at = pos + 1;
	pos += size;
	switch (b) {
		case 0xcb:
			return view.getFloat64(at);
		case 0xca:
			return view.getFloat32(at);
		case 0xcc:
			return buf[at];
		case 0xcd:
			return view.getUint16(at);
		case 0xce:
			return view.getUint32(at);
		case 0xd0:
			return view.getInt8(at);
		case 0xd1:
			return view.getInt16(at);
		case 0xd2:
			return view.getInt32(at);
		case 0xcf:
		case 0xd3: {
			// 64-bit integers: only safe integers, so no question of rounding arises
			const hi = b === 0xcf ? view.getUint32(at) : view.getInt32(at);
			const v = hi * 0x100000000 + view.getUint32(at + 4);
			if (Number.isSafeInteger(v)) return v;
			numOk = false;
			return 0;
		}
		default:
			return b <= 0x7f ? b : b - 0x100;
	}
}

function readFinite(): number {
	const v = readNumber();
	if (!Number.isFinite(v)) numOk = false;
	return v;
}

/** A vector of exactly `len` finite numbers, appended to `out` when given. */
function readVector(len: number, out: number[] | null): boolean {
	if (arrayHeader() !== len) return false;
	numOk = true;
	for (let i = 0; i < len; i++) {
		const v = readFinite();
		if (!numOk) return false;
		if (out !== null) out.push(v);
	}
	return true;
}

/** The same checks as validate.ts checkCovariance, on a vector read into `out` (or the scratch). */
function readCovariance(dim: number, tol: number, out: number[] | null): boolean {
	const len = dim * dim;
	if (arrayHeader() !== len) return false;
	if (scratch.length < len) scratch = new Float64Array(len);
	const m = scratch;
	numOk = true;
	for (let i = 0; i < len; i++) {
		m[i] = readFinite();
		if (!numOk) return false;
	}
	for (let i = 0; i < dim; i++) if (m[i * dim + i] < 0) return false;
	if (asymmetricAt(m, dim, tol) >= 0) return false;
	if (out !== null) for (let i = 0; i < len; i++) out.push(m[i]);
	return true;
}

/**
 * A string of `min`..`max` UTF-16 units for sure: decided on its byte length, else the general path decides.
 * Only well-formed UTF-8 without NUL: it decodes to the same text however it is decoded, and that text has
 * no NUL and no unpaired surrogate, which the general path refuses; anything else is left to it.
 */
function skipString(min: number, max: number): boolean {
	const n = stringHeader();
	if (n < 0) return false;
	const start = pos;
	pos += n;
	// UTF-16 units ≤ UTF-8 bytes, and a non-empty byte string is a non-empty string
	return n <= max && (min === 0 || n >= 1) && wellFormedText(start, pos);
}

/** Whether buf[from..to) is well-formed UTF-8 (RFC 3629, no surrogates, no overlong forms) with no NUL byte. */
function wellFormedText(from: number, to: number): boolean {
	let i = from;
	while (i < to) {
		const b = buf[i];
		if (b >= 0x01 && b <= 0x7f) {
			i++;
			continue;
		}
		let more: number;
		let lo = 0x80;
		let hi = 0xbf;
		if (b >= 0xc2 && b <= 0xdf) more = 1;
		else if (b >= 0xe0 && b <= 0xef) {
			more = 2;
			if (b === 0xe0) lo = 0xa0;
			else if (b === 0xed) hi = 0x9f; // U+D800..U+DFFF are surrogates, not characters
		} else if (b >= 0xf0 && b <= 0xf4) {
			more = 3;
			if (b === 0xf0) lo = 0x90;
			else if (b === 0xf4) hi = 0x8f;
		} else return false; // NUL, a continuation byte, C0/C1, F5..FF
		if (i + more >= to) return false;
		const second = buf[i + 1];
		if (second < lo || second > hi) return false;
		for (let k = 2; k <= more; k++) {
			const c = buf[i + k];
			if (c < 0x80 || c > 0xbf) return false;
		}
		i += more + 1;
	}
	return true;
}

function skipId(limits: IngestLimits): boolean {
	if (pos >= end) return false;
	const b = buf[pos];
	if ((b >= 0xa0 && b <= 0xbf) || b === 0xd9 || b === 0xda || b === 0xdb)
		return skipString(1, limits.maxIdLength);
	numOk = true;
	const v = readNumber();
	return numOk && Number.isSafeInteger(v);
}

const SEEN_ID = 1;
const SEEN_X = 2;
const SEEN_P = 4;
const SEEN_R = 8;
const SEEN_LABEL = 16;
const SEEN_Z = 32;
const SEEN_SENSOR = 64;
const SEEN_RR = 128;

function readMeasurement(dim: number, limits: IngestLimits): boolean {
	const n = mapHeader();
	if (n < 0) return false;
	let seen = 0;
	for (let k = 0; k < n; k++) {
		if (!nextKey()) return false;
		if (isKey(K.z)) {
			if (seen & SEEN_Z || !readVector(dim, null)) return false;
			seen |= SEEN_Z;
		} else if (isKey(K.sensor)) {
			if (seen & SEEN_SENSOR || !skipString(0, limits.maxLabelLength)) return false;
			seen |= SEEN_SENSOR;
		} else if (isKey(K.R)) {
			if (seen & SEEN_RR || !readCovariance(dim, limits.symmetryTolerance, null)) return false;
			seen |= SEEN_RR;
		} else return false;
	}
	return (seen & SEEN_Z) !== 0;
}

function readEstimate(dim: number, limits: IngestLimits): ReadEstimate | null {
	const n = mapHeader();
	if (n < 0) return null;
	let seen = 0;
	const x: number[] = [];
	let P: number[] | undefined;
	let r: number | undefined;
	for (let k = 0; k < n; k++) {
		if (!nextKey()) return null;
		if (isKey(K.x)) {
			if (seen & SEEN_X || !readVector(dim, x)) return null;
			seen |= SEEN_X;
		} else if (isKey(K.P)) {
			P = [];
			if (seen & SEEN_P || !readCovariance(dim, limits.symmetryTolerance, P)) return null;
			seen |= SEEN_P;
		} else if (isKey(K.r)) {
			if (seen & SEEN_R) return null;
			numOk = true;
			r = readFinite();
			if (!numOk || r < 0 || r > 1) return null;
			seen |= SEEN_R;
		} else if (isKey(K.id)) {
			if (seen & SEEN_ID || !skipId(limits)) return null;
			seen |= SEEN_ID;
		} else if (isKey(K.label)) {
			if (seen & SEEN_LABEL || !skipString(0, limits.maxLabelLength)) return null;
			seen |= SEEN_LABEL;
		} else return null;
	}
	if ((seen & SEEN_X) === 0) return null;
	const e: ReadEstimate = { x };
	if (P !== undefined) e.P = P;
	if (r !== undefined) e.r = r;
	return e;
}

function readTruth(dim: number, limits: IngestLimits): ReadTruth | null {
	const n = mapHeader();
	if (n < 0) return null;
	let seen = 0;
	const x: number[] = [];
	for (let k = 0; k < n; k++) {
		if (!nextKey()) return null;
		if (isKey(K.x)) {
			if (seen & SEEN_X || !readVector(dim, x)) return null;
			seen |= SEEN_X;
		} else if (isKey(K.id)) {
			if (seen & SEEN_ID || !skipId(limits)) return null;
			seen |= SEEN_ID;
		} else return null;
	}
	return (seen & SEEN_X) !== 0 ? { x } : null;
}

function readEgo(): EgoPose | null {
	if (mapHeader() !== 3) return null;
	let x = NaN;
	let y = NaN;
	let heading = NaN;
	numOk = true;
	for (let k = 0; k < 3; k++) {
		if (!nextKey()) return null;
		if (isKey(K.x) && Number.isNaN(x)) x = readFinite();
		else if (isKey(K.y) && Number.isNaN(y)) y = readFinite();
		else if (isKey(K.heading) && Number.isNaN(heading)) heading = readFinite();
		else return null;
		if (!numOk) return null;
	}
	return { x, y, heading };
}

/** A set's length, or -1 when the general path must decide. */
function readSetLength(limits: IngestLimits): number {
	const n = arrayHeader();
	// every item takes at least one byte
	if (n < 0 || n > limits.maxSetSize || n > end - pos) return -1;
	return n;
}

function readSet<T>(limits: IngestLimits, item: () => T | null): T[] | null {
	const count = readSetLength(limits);
	if (count < 0) return null;
	const set: T[] = [];
	for (let i = 0; i < count; i++) {
		const v = item();
		if (v === null) return null;
		set.push(v);
	}
	return set;
}

const T_TYPE = 1;
const T_SEQ = 2;
const T_T = 4;
const T_EGO = 8;
const T_MEAS = 16;
const T_EST = 32;
const T_TRUTH = 64;

function readTop(dims: RunDims, limits: IngestLimits): ReadFrame | null {
	const n = mapHeader();
	if (n < 0) return null;
	let seen = 0;
	const frame: ReadFrame = { seq: -1, t: 0 };
	for (let k = 0; k < n; k++) {
		if (!nextKey()) return null;
		if (isKey(K.type)) {
			if (seen & T_TYPE) return null;
			const sl = stringHeader();
			if (sl < 0 || !keyIs(pos, sl, K.frame)) return null;
			pos += sl;
			seen |= T_TYPE;
		} else if (isKey(K.seq)) {
			if (seen & T_SEQ || pos >= end) return null;
			const b = buf[pos];
			// integers only: a float-encoded seq is left to the general path
			if (b === 0xca || b === 0xcb) return null;
			numOk = true;
			const seq = readNumber();
			if (!numOk || !Number.isSafeInteger(seq) || seq < 0) return null;
			frame.seq = seq;
			seen |= T_SEQ;
		} else if (isKey(K.t)) {
			if (seen & T_T) return null;
			numOk = true;
			frame.t = readFinite();
			if (!numOk || frame.t < T_MIN || frame.t >= T_MAX) return null;
			seen |= T_T;
		} else if (isKey(K.ego)) {
			if (seen & T_EGO) return null;
			const ego = readEgo();
			if (ego === null) return null;
			frame.ego = ego;
			seen |= T_EGO;
		} else if (isKey(K.measurements)) {
			if (seen & T_MEAS) return null;
			const count = readSetLength(limits);
			if (count < 0) return null;
			for (let i = 0; i < count; i++) if (!readMeasurement(dims.measDim, limits)) return null;
			frame.measurements = { length: count };
			seen |= T_MEAS;
		} else if (isKey(K.estimates)) {
			if (seen & T_EST) return null;
			const set = readSet(limits, () => readEstimate(dims.stateDim, limits));
			if (set === null) return null;
			frame.estimates = set;
			seen |= T_EST;
		} else if (isKey(K.truth)) {
			if (seen & T_TRUTH) return null;
			const set = readSet(limits, () => readTruth(dims.stateDim, limits));
			if (set === null) return null;
			frame.truth = set;
			seen |= T_TRUTH;
		} else return null;
	}
	const required = T_TYPE | T_SEQ | T_T;
	if ((frame.truth?.length ?? 0) * (frame.estimates?.length ?? 0) > limits.maxPairs) return null;
	return (seen & required) === required ? frame : null;
}
