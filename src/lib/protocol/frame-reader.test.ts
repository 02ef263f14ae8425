/**
 * The fast frame reader may only ever say "valid, with these values" when the general path (decodeMessage +
 * validateFrame) says the same; everything else must come back null so the general path decides.
 */
import { Packr } from 'msgpackr';
import { describe, expect, it } from 'vitest';
import { defaultMetricSettings, type MetricSettings } from '../metrics';
import { frameMetrics, type MetricFrame } from '../metrics/frame';
import { seededRandom } from '../random';
import { decodeMessage } from './codec';
import { readFrame, type ReadFrame } from './frame-reader';
import { DEFAULT_LIMITS, resolveLimits } from './limits';
import type { FrameMessage } from './types';
import { T_MAX, T_MIN, validateFrame, type RunDims } from './validate';

const dims: RunDims = { stateDim: 4, measDim: 2 };
const packr = new Packr({ useRecords: false });
const packr32 = new Packr({ useRecords: false, useFloat32: 1 });

function symmetric(n: number, rnd: () => number): number[] {
	// A = B Bᵀ + I: symmetric positive definite
	const b = Array.from({ length: n * n }, () => rnd() * 2 - 1);
	const m = new Array<number>(n * n).fill(0);
	for (let i = 0; i < n; i++)
		for (let j = 0; j < n; j++) {
			let s = i === j ? 1 : 0;
			for (let k = 0; k < n; k++) s += b[i * n + k] * b[j * n + k];
			m[i * n + j] = s;
		}
	for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) m[i * n + j] = m[j * n + i];
	return m;
}

/** A random valid frame: sets absent, empty or filled; optional fields present or not; integers and floats. */
function randomFrame(seq: number, rnd: () => number): Record<string, unknown> {
	const pick = () => rnd();
	const num = () => (pick() < 0.2 ? Math.round(pick() * 200 - 100) : pick() * 100 - 50);
	const vec = (n: number) => Array.from({ length: n }, num);
	const size = () => (pick() < 0.15 ? -1 : Math.floor(pick() * 12));
	const f: Record<string, unknown> = { type: 'frame', seq, t: 1_790_000_000 + seq * 0.05 };
	if (pick() < 0.7) f.ego = { x: num(), y: num(), heading: pick() * 6 - 3 };
	const nm = size();
	if (nm >= 0)
		f.measurements = Array.from({ length: nm }, () => {
			const m: Record<string, unknown> = { z: vec(2) };
			if (pick() < 0.3) m.sensor = pick() < 0.5 ? 'radar-front' : '';
			if (pick() < 0.3) m.R = symmetric(2, pick);
			return m;
		});
	const ne = size();
	if (ne >= 0)
		f.estimates = Array.from({ length: ne }, (_, i) => {
			const e: Record<string, unknown> = { x: vec(4) };
			if (pick() < 0.7) e.id = pick() < 0.5 ? i : `track-${i}`;
			if (pick() < 0.7) e.P = symmetric(4, pick);
			if (pick() < 0.7) e.r = pick() < 0.1 ? 1 : pick();
			if (pick() < 0.2) e.label = pick() < 0.5 ? 'car' : pick() < 0.5 ? 'Fußgänger' : 'bus 🚌 北';
			return e;
		});
	const nt = size();
	if (nt >= 0)
		f.truth = Array.from({ length: nt }, (_, i) => {
			const o: Record<string, unknown> = { x: vec(4) };
			if (pick() < 0.7) o.id = pick() < 0.5 ? `gt${i}` : i;
			return o;
		});
	return f;
}

/** What the metrics read of a decoded, validated frame. */
function expectedRead(msg: FrameMessage): ReadFrame {
	const out: ReadFrame = { seq: msg.seq, t: msg.t };
	if (msg.ego) out.ego = { x: msg.ego.x, y: msg.ego.y, heading: msg.ego.heading };
	if (msg.measurements) out.measurements = { length: msg.measurements.length };
	if (msg.estimates)
		out.estimates = msg.estimates.map((e) => {
			const r: NonNullable<ReadFrame['estimates']>[number] = { x: e.x };
			if (e.P) r.P = e.P;
			if (e.r !== undefined) r.r = e.r;
			return r;
		});
	if (msg.truth) out.truth = msg.truth.map((o) => ({ x: o.x }));
	return out;
}

/** The general path's verdict: the expected read when the frame is valid, else null. */
function generalPath(bytes: Uint8Array, limits = DEFAULT_LIMITS): ReadFrame | null {
	const d = decodeMessage(bytes, true, limits.maxDepth);
	if (!d.ok) return null;
	const v = validateFrame(d.msg, dims, limits);
	return v.ok ? expectedRead(v.value) : null;
}

function mutate(bytes: Uint8Array, rnd: () => number): Uint8Array {
	const b = Uint8Array.from(bytes);
	const kind = rnd();
	if (kind < 0.6) {
		const flips = 1 + Math.floor(rnd() * 3);
		for (let k = 0; k < flips; k++) b[Math.floor(rnd() * b.length)] = Math.floor(rnd() * 256);
		return b;
	}
	if (kind < 0.8) return b.subarray(0, Math.floor(rnd() * b.length));
	const at = Math.floor(rnd() * b.length);
	const extra = Uint8Array.from({ length: 1 + Math.floor(rnd() * 4) }, () =>
		Math.floor(rnd() * 256)
	);
	const out = new Uint8Array(b.length + extra.length);
	out.set(b.subarray(0, at));
	out.set(extra, at);
	out.set(b.subarray(at), at + extra.length);
	return out;
}

describe('readFrame: valid frames', () => {
	it('reads random valid frames exactly as the general path decodes them (float64 and float32 encodings)', () => {
		const rnd = seededRandom(11);
		for (let i = 0; i < 400; i++) {
			const f = randomFrame(i, rnd);
			for (const p of [packr, packr32]) {
				const bytes = p.pack(f);
				const expected = generalPath(bytes);
				expect(expected).not.toBeNull();
				expect(readFrame(bytes, dims, DEFAULT_LIMITS)).toEqual(expected);
			}
		}
	});

	it('reads non-ASCII text and the first and last storable times on the fast path', () => {
		for (const f of [
			{ type: 'frame', seq: 1, t: T_MIN, estimates: [{ x: [1, 2, 3, 4], label: 'Fußgänger' }] },
			{
				type: 'frame',
				seq: 2,
				t: T_MAX - 0.001,
				measurements: [{ z: [1, 2], sensor: 'radar 北 🚗' }],
				truth: [{ id: 'ü-7', x: [1, 2, 3, 4] }]
			}
		]) {
			const bytes = packr.pack(f);
			const expected = generalPath(bytes);
			expect(expected).not.toBeNull();
			expect(readFrame(bytes, dims, DEFAULT_LIMITS)).toEqual(expected);
		}
	});

	it('leaves every string that is not well-formed UTF-8 to the general path', () => {
		// overlong '/', an encoded surrogate (U+D800), a lone continuation byte, a truncated 3-byte form, a code
		// point above U+10FFFF, an overlong surrogate: what a decoder makes of them (msgpackr: U+FFFD, which the
		// general path accepts) is the general path's call, never the reader's
		for (const label of [
			[0xc0, 0xaf],
			[0xed, 0xa0, 0x80],
			[0x80],
			[0xe2, 0x82],
			[0xf4, 0x90, 0x80, 0x80],
			[0xf0, 0x8d, 0xa0, 0x80]
		]) {
			const bytes = Uint8Array.from([
				0x83,
				...packr.pack('type'),
				...packr.pack('frame'),
				...packr.pack('seq'),
				1,
				...packr.pack('estimates'),
				0x91,
				0x82,
				...packr.pack('x'),
				...packr.pack([1, 2, 3, 4]),
				...packr.pack('label'),
				0xa0 | label.length,
				...label
			]);
			const withT = Uint8Array.from([0x84, ...bytes.subarray(1), ...packr.pack('t'), 2]);
			expect(readFrame(withT, dims, DEFAULT_LIMITS), label.join(' ')).toBeNull();
		}
	});

	it('keeps absent and empty sets apart', () => {
		const bytes = packr.pack({ type: 'frame', seq: 0, t: 1, estimates: [] });
		const read = readFrame(bytes, dims, DEFAULT_LIMITS);
		expect(read?.estimates).toEqual([]);
		expect(read).not.toHaveProperty('truth');
		expect(read).not.toHaveProperty('measurements');
	});

	it('accepts keys in any order and wider-than-needed encodings', () => {
		// seq as uint32 and t as float64 at fixed offsets, as the bench rig writes them
		const bytes = Uint8Array.from([
			0x83,
			...packr.pack('t'),
			0xcb,
			...new Uint8Array(new Float64Array([2.5]).buffer).reverse(),
			...packr.pack('seq'),
			0xce,
			0,
			0,
			1,
			0,
			...packr.pack('type'),
			...packr.pack('frame')
		]);
		expect(readFrame(bytes, dims, DEFAULT_LIMITS)).toEqual({ seq: 256, t: 2.5 });
	});
});

describe('readFrame: anything else goes to the general path', () => {
	const base = {
		type: 'frame',
		seq: 7,
		t: 1_700_000_000.25,
		ego: { x: 1, y: 2, heading: 0.1 },
		measurements: [{ z: [1, 2], sensor: 'radar-front', R: [0.5, 0, 0, 0.5] }],
		estimates: [{ id: 'a1', x: [1, 2, 3, 4], P: symmetric(4, seededRandom(3)), r: 0.9 }],
		truth: [{ id: 3, x: [1, 2, 3, 4] }]
	};
	const est = base.estimates[0];
	const cases: [string, unknown][] = [
		['open message', { type: 'open', run: {} }],
		['type not frame', { ...base, type: 'close' }],
		['missing seq', { ...base, seq: undefined }],
		['negative seq', { ...base, seq: -1 }],
		['seq as a float', { ...base, seq: 7.5 }],
		['missing t', { ...base, t: undefined }],
		['NaN t', { ...base, t: NaN }],
		['infinite t', { ...base, t: Infinity }],
		['t as a string', { ...base, t: '1' }],
		['unknown top-level field', { ...base, colour: 'red' }],
		['null set', { ...base, truth: null }],
		['set not an array', { ...base, truth: { x: [1, 2, 3, 4] } }],
		['ego missing heading', { ...base, ego: { x: 1, y: 2 } }],
		['ego extra field', { ...base, ego: { x: 1, y: 2, heading: 0, z: 1 } }],
		['z too short', { ...base, measurements: [{ z: [1] }] }],
		['z missing', { ...base, measurements: [{ sensor: 'a' }] }],
		['R not symmetric', { ...base, measurements: [{ z: [1, 2], R: [1, 0.5, 0.2, 1] }] }],
		['R negative variance', { ...base, measurements: [{ z: [1, 2], R: [-1, 0, 0, 1] }] }],
		['sensor too long', { ...base, measurements: [{ z: [1, 2], sensor: 's'.repeat(65) }] }],
		['x wrong length', { ...base, estimates: [{ ...est, x: [1, 2, 3] }] }],
		['x with NaN', { ...base, estimates: [{ ...est, x: [1, NaN, 3, 4] }] }],
		['x with null', { ...base, estimates: [{ ...est, x: [1, null, 3, 4] }] }],
		['P wrong length', { ...base, estimates: [{ ...est, P: est.P.slice(1) }] }],
		[
			'P not symmetric',
			{ ...base, estimates: [{ ...est, P: est.P.map((v, k) => (k === 1 ? v + 1 : v)) }] }
		],
		['r above 1', { ...base, estimates: [{ ...est, r: 1.01 }] }],
		['r below 0', { ...base, estimates: [{ ...est, r: -0.01 }] }],
		['empty id', { ...base, estimates: [{ ...est, id: '' }] }],
		['id too long', { ...base, estimates: [{ ...est, id: 'i'.repeat(129) }] }],
		['id not an integer', { ...base, estimates: [{ ...est, id: 1.5 }] }],
		['id a map', { ...base, truth: [{ id: {}, x: [1, 2, 3, 4] }] }],
		['unknown estimate field', { ...base, estimates: [{ ...est, colour: 'red' }] }],
		['unknown truth field', { ...base, truth: [{ x: [1, 2, 3, 4], r: 1 }] }],
		['truth without x', { ...base, truth: [{ id: 1 }] }],
		['too many items', { ...base, truth: Array.from({ length: 6 }, () => ({ x: [1, 2, 3, 4] })) }],
		[
			'too many truth × estimate pairs',
			{ ...base, estimates: Array(5).fill(est), truth: Array(5).fill(base.truth[0]) }
		],
		// what the database would refuse (docs/protocol.md, "What storage refuses")
		['t in milliseconds', { ...base, t: 1_790_000_000_000 }],
		['t in year 10000', { ...base, t: T_MAX }],
		['t before year 1', { ...base, t: T_MIN - 0.001 }],
		['NUL in a label', { ...base, estimates: [{ ...est, label: 'car\0' }] }],
		['NUL in a sensor', { ...base, measurements: [{ z: [1, 2], sensor: '\0' }] }],
		['NUL in an id', { ...base, truth: [{ id: 'g\0t', x: [1, 2, 3, 4] }] }],
		['NUL in an unknown field name', { ...base, ['co\0lour']: 1 }]
	];
	const limits = resolveLimits({ maxSetSize: 5, maxPairs: 20 });
	for (const [name, msg] of cases) {
		it(name, () => {
			const bytes = packr.pack(msg);
			expect(generalPath(bytes, limits)).toBeNull(); // the case really is invalid
			expect(readFrame(bytes, dims, limits)).toBeNull();
		});
	}

	it('reads a frame at exactly the pairs limit', () => {
		const msg = { ...base, estimates: Array(4).fill(est), truth: Array(5).fill(base.truth[0]) };
		const bytes = packr.pack(msg);
		expect(readFrame(bytes, dims, limits)).toEqual(generalPath(bytes, limits));
		expect(readFrame(bytes, dims, limits)?.estimates).toHaveLength(4);
	});

	it('a duplicate key, which the general path resolves as last-wins, is left to it', () => {
		// {type, seq, t, seq}: hand-encoded, as no encoder writes duplicates
		const bytes = Uint8Array.from([
			0x84,
			...packr.pack('type'),
			...packr.pack('frame'),
			...packr.pack('seq'),
			1,
			...packr.pack('t'),
			2,
			...packr.pack('seq'),
			3
		]);
		expect(generalPath(bytes)?.seq).toBe(3);
		expect(readFrame(bytes, dims, DEFAULT_LIMITS)).toBeNull();
	});

	it('a 64-bit integer beyond 2^53 is left to the general path', () => {
		const bytes = Uint8Array.from([
			0x83,
			...packr.pack('type'),
			...packr.pack('frame'),
			...packr.pack('seq'),
			0xcf,
			0,
			0x40,
			0,
			0,
			0,
			0,
			0,
			1,
			...packr.pack('t'),
			2
		]);
		expect(readFrame(bytes, dims, DEFAULT_LIMITS)).toBeNull();
	});

	it('trailing bytes are left to the general path', () => {
		const bytes = packr.pack(base);
		const longer = new Uint8Array(bytes.length + 1);
		longer.set(bytes);
		expect(readFrame(longer, dims, DEFAULT_LIMITS)).toBeNull();
	});

	it('never reads a frame the general path would not accept, on 30,000 mutated messages', () => {
		const rnd = seededRandom(5);
		let accepted = 0;
		let agreedInvalid = 0;
		for (let i = 0; i < 30_000; i++) {
			const f = i % 7 === 0 ? base : randomFrame(i, rnd);
			const bytes = mutate((i % 3 === 0 ? packr32 : packr).pack(f), rnd);
			const read = readFrame(bytes, dims, DEFAULT_LIMITS);
			const expected = generalPath(bytes);
			if (read !== null) {
				expect(read).toEqual(expected);
				accepted++;
			} else if (expected === null) agreedInvalid++;
		}
		// the mutations must exercise both sides of the contract
		expect(accepted).toBeGreaterThan(1000);
		expect(agreedInvalid).toBeGreaterThan(10_000);
	});
});

describe('metrics from what the reader reads', () => {
	it('equal the metrics of the decoded frame, for every setting the run can have', () => {
		const rnd = seededRandom(23);
		const variants: MetricSettings[] = [
			defaultMetricSettings,
			{ ...defaultMetricSettings, c: 3, p: 1 },
			{ ...defaultMetricSettings, distance: 'state', weights: [1, 1, 0.25, 0.25], nees: 'state' }
		];
		for (let i = 0; i < 300; i++) {
			const f = randomFrame(i, rnd);
			const bytes = packr.pack(f);
			const read = readFrame(bytes, dims, DEFAULT_LIMITS) as MetricFrame;
			const decoded = decodeMessage(bytes);
			if (!decoded.ok) throw new Error('undecodable test frame');
			for (const settings of variants) {
				for (const coords of ['world', 'ego'] as const) {
					const ctx = { stateFields: ['x', 'y', 'vx', 'vy'], settings, coords };
					expect(frameMetrics(read, ctx)).toEqual(
						frameMetrics(decoded.msg as unknown as MetricFrame, ctx)
					);
				}
			}
		}
	});
});
