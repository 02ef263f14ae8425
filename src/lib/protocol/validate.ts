/**
 * Hand-written validation of ingest messages (docs/protocol.md, "Validation").
 * It runs for every frame, so it walks each value once, allocates nothing on success,
 * and builds the error path only when something fails.
 *
 * Rules that are decisions rather than obvious:
 * - unknown fields are rejected, at every level (nothing is dropped silently);
 * - `null` is never accepted in place of an absent field;
 * - fields are checked in the documented order, then unknown fields; the first failure is reported;
 * - nothing the database would refuse gets through (docs/protocol.md, "What storage refuses"): strings are
 *   Unicode text without NUL, and `t` lies in years 1–9999, so a frame's content never fails its commit.
 */
import { DEFAULT_LIMITS, type IngestLimits } from './limits';
import type { FrameMessage, OpenMessage } from './types';

export type Validation<T> =
	| { ok: true; value: T }
	| {
			ok: false;
			/** first offending path, e.g. `estimates[3].P`; empty for the message itself */
			path: string;
			message: string;
	  };

export interface RunDims {
	stateDim: number;
	measDim: number;
}

type Fail = { ok: false; path: string; message: string };

/** `estimates[3].P: length 15, expected 16` — the form used on the wire and in quarantine. */
export function formatIssue(issue: { path: string; message: string }): string {
	return issue.path === '' ? issue.message : `${issue.path}: ${issue.message}`;
}

interface Issue {
	sub: string;
	message: string;
}

function issue(sub: string, message: string): Issue {
	return { sub, message };
}

function fail(path: string, message: string): Fail {
	return { ok: false, path, message };
}

function at(prefix: string, found: Issue): Fail {
	return { ok: false, path: prefix + found.sub, message: found.message };
}

function describe(v: unknown): string {
	if (v === null) return 'null';
	if (Array.isArray(v)) return 'an array';
	if (typeof v === 'number') return String(v);
	if (typeof v === 'string') return 'a string';
	if (typeof v === 'object') return 'a map';
	return `a ${typeof v}`;
}

function isMap(v: unknown): v is Record<string, unknown> {
	if (typeof v !== 'object' || v === null || Array.isArray(v)) return false;
	const proto: unknown = Object.getPrototypeOf(v);
	return proto === Object.prototype || proto === null;
}

function isFiniteNumber(v: unknown): v is number {
	return typeof v === 'number' && Number.isFinite(v);
}

function expectedNumber(v: unknown): string {
	return `expected a finite number, got ${describe(v)}`;
}

/**
 * An unknown field's name as it appears in a reason (which is stored): at most 40 UTF-16 units, never half a
 * surrogate pair, with control characters and unpaired surrogates written as \uXXXX escapes.
 */
function fieldKey(key: string): string {
	let cut = key.length > 40 ? 40 : key.length;
	if (cut < key.length && isHighSurrogate(key.charCodeAt(cut - 1))) cut--;
	let out = '';
	for (let i = 0; i < cut; i++) {
		const c = key.charCodeAt(i);
		const paired = isHighSurrogate(c)
			? i + 1 < cut && isLowSurrogate(key.charCodeAt(i + 1))
			: isLowSurrogate(c) && i > 0 && isHighSurrogate(key.charCodeAt(i - 1));
		if (c < 0x20 || c === 0x7f || (c >= 0xd800 && c <= 0xdfff && !paired)) {
			out += `\\u${c.toString(16).padStart(4, '0')}`;
		} else out += key[i];
	}
	return cut < key.length ? `${out}…` : out;
}

function isHighSurrogate(c: number): boolean {
	return c >= 0xd800 && c <= 0xdbff;
}

function isLowSurrogate(c: number): boolean {
	return c >= 0xdc00 && c <= 0xdfff;
}

/**
 * Why a string is not text the database stores (PostgreSQL's text refuses U+0000; its jsonb refuses
 * `\u0000` and unpaired surrogates), or null when it is.
 */
export function textProblem(v: string): string | null {
	for (let i = 0; i < v.length; i++) {
		const c = v.charCodeAt(i);
		if (c === 0) return `contains a NUL character (U+0000) at index ${i}`;
		if (c < 0xd800 || c > 0xdfff) continue;
		if (isHighSurrogate(c) && i + 1 < v.length && isLowSurrogate(v.charCodeAt(i + 1))) {
			i++;
			continue;
		}
		return `contains an unpaired surrogate (U+${c.toString(16).toUpperCase()}) at index ${i}`;
	}
	return null;
}

function checkString(v: unknown, min: number, max: number): string | null {
	if (typeof v !== 'string') return `expected a string, got ${describe(v)}`;
	if (v.length < min) return min === 1 ? 'must not be empty' : `must be at least ${min} characters`;
	if (v.length > max) return `${v.length} characters, at most ${max}`;
	return textProblem(v);
}

/** Device time PostgreSQL's timestamps hold for Skein: 0001-01-01T00:00:00Z ≤ t < 10000-01-01T00:00:00Z. */
export const T_MIN = -62_135_596_800;
export const T_MAX = 253_402_300_800;

const timeUnits: [number, string][] = [
	[1e3, 'milliseconds'],
	[1e6, 'microseconds'],
	[1e9, 'nanoseconds']
];

/**
 * Why `t` (finite) cannot be stored, or null when it can. A value that is a time after 2001 once divided by
 * 1e3, 1e6 or 1e9 is named as a clock in that unit, the usual rig mistake.
 */
export function timeProblem(t: number): string | null {
	if (t >= T_MIN && t < T_MAX) return null;
	for (const [factor, unit] of timeUnits) {
		const s = t / factor;
		if (s >= 1e9 && s < T_MAX) {
			const day = new Date(Math.floor(s) * 1000).toISOString().slice(0, 10);
			return `${t} looks like ${unit} (${day} if so); t is in seconds since the Unix epoch, years 1–9999`;
		}
	}
	return `${t} is outside years 1–9999 (${T_MIN} ≤ t < ${T_MAX} seconds since the Unix epoch)`;
}

function checkVector(v: unknown, len: number): Issue | null {
	if (!Array.isArray(v))
		return issue('', `expected an array of ${len} numbers, got ${describe(v)}`);
	if (v.length !== len) return issue('', `length ${v.length}, expected ${len}`);
	for (let i = 0; i < len; i++) {
		const n: unknown = v[i];
		if (typeof n !== 'number' || !Number.isFinite(n)) return issue(`[${i}]`, expectedNumber(n));
	}
	return null;
}

/** Row-major square covariance of dimension `dim`: finite, non-negative diagonal, symmetric within `tol`. */
function checkCovariance(v: unknown, dim: number, tol: number, name: string): Issue | null {
	const len = dim * dim;
	const shape = checkVector(v, len);
	if (shape !== null) return shape;
	const m = v as number[];
	for (let i = 0; i < dim; i++) {
		const d = m[i * dim + i];
		if (d < 0) return issue(`[${i * dim + i}]`, `negative variance ${d} on the diagonal`);
	}
	const k = asymmetricAt(m, dim, tol);
	if (k < 0) return null;
	const i = Math.floor(k / dim);
	const j = k % dim;
	return issue(
		`[${k}]`,
		`not symmetric: ${name}[${i},${j}] = ${m[k]} but ${name}[${j},${i}] = ${m[j * dim + i]} (relative tolerance ${tol})`
	);
}

/**
 * The first upper-triangle index i·dim + j where M[i,j] and M[j,i] differ by more than the tolerance, or -1:
 * |M[i,j] − M[j,i]| ≤ tol · max(|M[i,j]|, |M[j,i]|, √(M[i,i]·M[j,j])).
 */
export function asymmetricAt(m: ArrayLike<number>, dim: number, tol: number): number {
	for (let i = 0; i < dim; i++) {
		for (let j = i + 1; j < dim; j++) {
			const a = m[i * dim + j];
			const b = m[j * dim + i];
			const diff = Math.abs(a - b);
			if (diff === 0) continue;
			const scale = Math.max(Math.abs(a), Math.abs(b), Math.sqrt(m[i * dim + i] * m[j * dim + j]));
			if (diff > tol * scale) return i * dim + j;
		}
	}
	return -1;
}

function checkId(v: unknown, limits: IngestLimits): string | null {
	if (typeof v === 'string') return checkString(v, 1, limits.maxIdLength);
	if (typeof v === 'number') {
		return Number.isSafeInteger(v)
			? null
			: `expected a string or a safe integer, got ${describe(v)}`;
	}
	return `expected a string or a safe integer, got ${describe(v)}`;
}

function checkMeasurement(m: unknown, dim: number, limits: IngestLimits): Issue | null {
	if (!isMap(m)) return issue('', `expected a map, got ${describe(m)}`);
	const z = checkVector(m.z, dim);
	if (z !== null) return issue(`.z${z.sub}`, m.z === undefined ? 'missing' : z.message);
	if (m.sensor !== undefined) {
		const s = checkString(m.sensor, 0, limits.maxLabelLength);
		if (s !== null) return issue('.sensor', s);
	}
	if (m.R !== undefined) {
		const r = checkCovariance(m.R, dim, limits.symmetryTolerance, 'R');
		if (r !== null) return issue(`.R${r.sub}`, r.message);
	}
	for (const k in m) {
		if (k !== 'z' && k !== 'sensor' && k !== 'R') return issue(`.${fieldKey(k)}`, 'unknown field');
	}
	return null;
}

function checkEstimate(e: unknown, dim: number, limits: IngestLimits): Issue | null {
	if (!isMap(e)) return issue('', `expected a map, got ${describe(e)}`);
	if (e.id !== undefined) {
		const s = checkId(e.id, limits);
		if (s !== null) return issue('.id', s);
	}
	const x = checkVector(e.x, dim);
	if (x !== null) return issue(`.x${x.sub}`, e.x === undefined ? 'missing' : x.message);
	if (e.P !== undefined) {
		const p = checkCovariance(e.P, dim, limits.symmetryTolerance, 'P');
		if (p !== null) return issue(`.P${p.sub}`, p.message);
	}
	if (e.r !== undefined) {
		const r = e.r;
		if (!isFiniteNumber(r)) return issue('.r', expectedNumber(r));
		if (r < 0 || r > 1) return issue('.r', `${r} is outside [0, 1]`);
	}
	if (e.label !== undefined) {
		const s = checkString(e.label, 0, limits.maxLabelLength);
		if (s !== null) return issue('.label', s);
	}
	for (const k in e) {
		if (k !== 'id' && k !== 'x' && k !== 'P' && k !== 'r' && k !== 'label') {
			return issue(`.${fieldKey(k)}`, 'unknown field');
		}
	}
	return null;
}

function checkTruth(o: unknown, dim: number, limits: IngestLimits): Issue | null {
	if (!isMap(o)) return issue('', `expected a map, got ${describe(o)}`);
	if (o.id !== undefined) {
		const s = checkId(o.id, limits);
		if (s !== null) return issue('.id', s);
	}
	const x = checkVector(o.x, dim);
	if (x !== null) return issue(`.x${x.sub}`, o.x === undefined ? 'missing' : x.message);
	for (const k in o) {
		if (k !== 'id' && k !== 'x') return issue(`.${fieldKey(k)}`, 'unknown field');
	}
	return null;
}

function checkEgo(ego: unknown): Issue | null {
	if (!isMap(ego)) return issue('', `expected a map, got ${describe(ego)}`);
	if (!isFiniteNumber(ego.x))
		return issue('.x', ego.x === undefined ? 'missing' : expectedNumber(ego.x));
	if (!isFiniteNumber(ego.y))
		return issue('.y', ego.y === undefined ? 'missing' : expectedNumber(ego.y));
	if (!isFiniteNumber(ego.heading)) {
		return issue('.heading', ego.heading === undefined ? 'missing' : expectedNumber(ego.heading));
	}
	for (const k in ego) {
		if (k !== 'x' && k !== 'y' && k !== 'heading') return issue(`.${fieldKey(k)}`, 'unknown field');
	}
	return null;
}

type ItemCheck = (item: unknown, dim: number, limits: IngestLimits) => Issue | null;

function checkSet(
	name: string,
	set: unknown,
	dim: number,
	limits: IngestLimits,
	check: ItemCheck
): Fail | null {
	if (set === undefined) return null;
	if (!Array.isArray(set)) return fail(name, `expected an array, got ${describe(set)}`);
	if (set.length > limits.maxSetSize) {
		return fail(name, `${set.length} items, at most ${limits.maxSetSize}`);
	}
	for (let i = 0; i < set.length; i++) {
		const found = check(set[i], dim, limits);
		if (found !== null) return at(`${name}[${i}]`, found);
	}
	return null;
}

/** Reads `seq` alone, so the session can apply the sequence rules before paying for full validation. */
export function readSeq(msg: Record<string, unknown>): number | null {
	const seq = msg.seq;
	return typeof seq === 'number' && Number.isSafeInteger(seq) && seq >= 0 ? seq : null;
}

export function validateFrame(
	msg: unknown,
	dims: RunDims,
	limits: IngestLimits = DEFAULT_LIMITS
): Validation<FrameMessage> {
	if (!isMap(msg)) return fail('', `expected a map, got ${describe(msg)}`);
	if (msg.type !== 'frame') return fail('type', `expected "frame"`);
	const seq = msg.seq;
	if (seq === undefined) return fail('seq', 'missing');
	if (typeof seq !== 'number' || !Number.isSafeInteger(seq) || seq < 0) {
		return fail('seq', `expected a non-negative integer, got ${describe(seq)}`);
	}
	if (msg.t === undefined) return fail('t', 'missing');
	if (!isFiniteNumber(msg.t)) return fail('t', expectedNumber(msg.t));
	const when = timeProblem(msg.t);
	if (when !== null) return fail('t', when);
	if (msg.ego !== undefined) {
		const found = checkEgo(msg.ego);
		if (found !== null) return at('ego', found);
	}
	const failed =
		checkSet('measurements', msg.measurements, dims.measDim, limits, checkMeasurement) ??
		checkSet('estimates', msg.estimates, dims.stateDim, limits, checkEstimate) ??
		checkSet('truth', msg.truth, dims.stateDim, limits, checkTruth);
	if (failed !== null) return failed;
	const nTruth = Array.isArray(msg.truth) ? msg.truth.length : 0;
	const nEst = Array.isArray(msg.estimates) ? msg.estimates.length : 0;
	if (nTruth * nEst > limits.maxPairs) {
		return fail(
			'truth',
			`${nTruth} objects × ${nEst} estimates = ${nTruth * nEst} pairs, at most ${limits.maxPairs}`
		);
	}
	for (const k in msg) {
		switch (k) {
			case 'type':
			case 'seq':
			case 't':
			case 'ego':
			case 'measurements':
			case 'estimates':
			case 'truth':
				continue;
			default:
				return fail(fieldKey(k), 'unknown field');
		}
	}
	return { ok: true, value: msg as unknown as FrameMessage };
}

function checkFieldList(v: unknown, limits: IngestLimits): Issue | null {
	if (!Array.isArray(v)) return issue('', `expected an array of field names, got ${describe(v)}`);
	if (v.length > limits.maxDim) return issue('', `${v.length} fields, at most ${limits.maxDim}`);
	for (let i = 0; i < v.length; i++) {
		const s = checkString(v[i], 1, limits.maxFieldNameLength);
		if (s !== null) return issue(`[${i}]`, s);
		if (v.indexOf(v[i]) !== i) return issue(`[${i}]`, `duplicate field "${v[i] as string}"`);
	}
	if (!v.includes('x')) return issue('', 'must contain "x"');
	if (!v.includes('y')) return issue('', 'must contain "y"');
	return null;
}

function checkRunSpec(run: unknown, limits: IngestLimits): Issue | null {
	if (!isMap(run)) return issue('', `expected a map, got ${describe(run)}`);
	if (run.name === undefined) return issue('.name', 'missing');
	const name = checkString(run.name, 1, limits.maxRunNameLength);
	if (name !== null) return issue('.name', name);
	if (run.state_fields === undefined) return issue('.state_fields', 'missing');
	const sf = checkFieldList(run.state_fields, limits);
	if (sf !== null) return issue(`.state_fields${sf.sub}`, sf.message);
	if (run.measurement_fields === undefined) return issue('.measurement_fields', 'missing');
	const mf = checkFieldList(run.measurement_fields, limits);
	if (mf !== null) return issue(`.measurement_fields${mf.sub}`, mf.message);
	if (run.coords !== undefined && run.coords !== 'world' && run.coords !== 'ego') {
		return issue('.coords', 'expected "world" or "ego"');
	}
	if (run.units !== undefined) {
		const units = run.units;
		if (!isMap(units)) return issue('.units', `expected a map, got ${describe(units)}`);
		if (units.length !== 'm') return issue('.units.length', 'expected "m"');
		for (const k in units)
			if (k !== 'length') return issue(`.units.${fieldKey(k)}`, 'unknown field');
	}
	if (run.tags !== undefined) {
		const tags = run.tags;
		if (!Array.isArray(tags))
			return issue('.tags', `expected an array of strings, got ${describe(tags)}`);
		if (tags.length > limits.maxTags)
			return issue('.tags', `${tags.length} tags, at most ${limits.maxTags}`);
		for (let i = 0; i < tags.length; i++) {
			const s = checkString(tags[i], 1, limits.maxTagLength);
			if (s !== null) return issue(`.tags[${i}]`, s);
		}
	}
	if (run.notes !== undefined) {
		const s = checkString(run.notes, 0, limits.maxNotesLength);
		if (s !== null) return issue('.notes', s);
	}
	for (const k in run) {
		switch (k) {
			case 'name':
			case 'state_fields':
			case 'measurement_fields':
			case 'coords':
			case 'units':
			case 'tags':
			case 'notes':
				continue;
			default:
				return issue(`.${fieldKey(k)}`, 'unknown field');
		}
	}
	return null;
}

export function validateOpen(
	msg: unknown,
	limits: IngestLimits = DEFAULT_LIMITS
): Validation<OpenMessage> {
	if (!isMap(msg)) return fail('', `expected a map, got ${describe(msg)}`);
	if (msg.type !== 'open') return fail('type', 'expected "open"');
	if (msg.client_run_id !== undefined) {
		const s = checkString(msg.client_run_id, 1, limits.maxClientRunIdLength);
		if (s !== null) return fail('client_run_id', s);
	}
	if (msg.run === undefined) return fail('run', 'missing');
	const run = checkRunSpec(msg.run, limits);
	if (run !== null) return at('run', run);
	for (const k in msg) {
		if (k !== 'type' && k !== 'client_run_id' && k !== 'run')
			return fail(fieldKey(k), 'unknown field');
	}
	return { ok: true, value: msg as unknown as OpenMessage };
}

/** Dimensions a run's frames are validated against. */
export function runDims(spec: {
	state_fields: readonly string[];
	measurement_fields: readonly string[];
}): RunDims {
	return { stateDim: spec.state_fields.length, measDim: spec.measurement_fields.length };
}
