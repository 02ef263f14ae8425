import { Packr } from 'msgpackr';
import { describe, expect, it } from 'vitest';
import { decodeMessage } from './codec';
import { DEFAULT_LIMITS, resolveLimits } from './limits';
import {
	formatIssue,
	readSeq,
	T_MAX,
	T_MIN,
	validateFrame,
	validateOpen,
	type Validation
} from './validate';

const dims = { stateDim: 4, measDim: 2 };

function identity(n: number, scale = 1): number[] {
	const m = new Array<number>(n * n).fill(0);
	for (let i = 0; i < n; i++) m[i * n + i] = scale;
	return m;
}

function frame(extra: Record<string, unknown> = {}): Record<string, unknown> {
	return {
		type: 'frame',
		seq: 7,
		t: 1_700_000_000.25,
		ego: { x: 1, y: 2, heading: 0.1 },
		measurements: [{ z: [1, 2], sensor: 'radar-front', R: identity(2, 0.5) }],
		estimates: [{ id: 'a1', x: [1, 2, 3, 4], P: identity(4, 2), r: 0.9, label: 'car' }],
		truth: [{ id: 3, x: [1, 2, 3, 4] }],
		...extra
	};
}

function problem<T>(v: Validation<T>): string {
	return v.ok ? 'ok' : formatIssue(v);
}

function check(msg: unknown): string {
	return problem(validateFrame(msg, dims));
}

/** Builds a frame, lets `edit` break it, returns the validator's verdict. */
function broken(edit: (f: Record<string, unknown>) => void): string {
	const f = frame();
	edit(f);
	return check(f);
}

function estimate(f: Record<string, unknown>): Record<string, unknown> {
	return (f.estimates as Record<string, unknown>[])[0];
}

function measurement(f: Record<string, unknown>): Record<string, unknown> {
	return (f.measurements as Record<string, unknown>[])[0];
}

describe('validateFrame', () => {
	it('accepts a full frame and returns the same object', () => {
		const f = frame();
		const v = validateFrame(f, dims);
		expect(v.ok).toBe(true);
		if (v.ok) expect(v.value).toBe(f);
	});

	it('accepts the minimal frame and keeps absent and empty sets apart', () => {
		const v = validateFrame({ type: 'frame', seq: 0, t: 0, estimates: [] }, dims);
		expect(v.ok).toBe(true);
		if (!v.ok) return;
		expect(v.value.estimates).toEqual([]);
		expect('measurements' in v.value).toBe(false);
		expect(v.value.truth).toBeUndefined();
	});

	it('checks the frame itself', () => {
		expect(check([])).toBe('expected a map, got an array');
		expect(check(null)).toBe('expected a map, got null');
		expect(broken((f) => (f.type = 'open'))).toBe('type: expected "frame"');
		expect(broken((f) => delete f.seq)).toBe('seq: missing');
		expect(broken((f) => (f.seq = -1))).toBe('seq: expected a non-negative integer, got -1');
		expect(broken((f) => (f.seq = 1.5))).toBe('seq: expected a non-negative integer, got 1.5');
		expect(broken((f) => (f.seq = '3'))).toBe('seq: expected a non-negative integer, got a string');
		expect(broken((f) => (f.seq = 2 ** 53))).toMatch(/^seq: expected a non-negative integer/);
		expect(broken((f) => delete f.t)).toBe('t: missing');
		expect(broken((f) => (f.t = '1'))).toBe('t: expected a finite number, got a string');
		expect(broken((f) => (f.t = Infinity))).toBe('t: expected a finite number, got Infinity');
		expect(broken((f) => (f.extra = 1))).toBe('extra: unknown field');
	});

	it('accepts t in years 1–9999 only, and says when it looks like milliseconds', () => {
		// the bounds: 0001-01-01T00:00:00Z and 10000-01-01T00:00:00Z, from Date's own arithmetic
		expect(T_MIN).toBe(Date.parse('0001-01-01T00:00:00Z') / 1000);
		expect(T_MAX).toBe(Date.parse('9999-12-31T23:59:59Z') / 1000 + 1);
		expect(broken((f) => (f.t = T_MIN))).toBe('ok');
		expect(broken((f) => (f.t = T_MAX - 0.001))).toBe('ok');
		expect(broken((f) => (f.t = -1.5))).toBe('ok');
		expect(broken((f) => (f.t = T_MAX))).toBe(
			't: 253402300800 is outside years 1–9999 (-62135596800 ≤ t < 253402300800 seconds since the Unix epoch)'
		);
		expect(broken((f) => (f.t = T_MIN - 1))).toMatch(/^t: -62135596801 is outside years 1–9999/);
		expect(broken((f) => (f.t = 1e300))).toMatch(/^t: 1e\+300 is outside years 1–9999/);
		expect(broken((f) => (f.t = 1_790_000_000_123))).toBe(
			't: 1790000000123 looks like milliseconds (2026-09-21 if so); t is in seconds since the Unix epoch, years 1–9999'
		);
		expect(broken((f) => (f.t = 1_790_000_000_123_456))).toMatch(/looks like microseconds/);
		expect(broken((f) => (f.t = 1.79e18))).toMatch(/looks like nanoseconds/);
	});

	it('accepts only text the database stores: no NUL, no unpaired surrogate', () => {
		expect(broken((f) => (estimate(f).label = 'Fußgänger 🚶'))).toBe('ok');
		expect(broken((f) => (estimate(f).label = 'car\0'))).toBe(
			'estimates[0].label: contains a NUL character (U+0000) at index 3'
		);
		expect(broken((f) => (estimate(f).id = 'a\ud83d'))).toBe(
			'estimates[0].id: contains an unpaired surrogate (U+D83D) at index 1'
		);
		expect(broken((f) => (estimate(f).id = '\ude80x'))).toBe(
			'estimates[0].id: contains an unpaired surrogate (U+DE80) at index 0'
		);
		expect(broken((f) => (measurement(f).sensor = '\0'))).toBe(
			'measurements[0].sensor: contains a NUL character (U+0000) at index 0'
		);
		expect(broken((f) => ((f.truth as Record<string, unknown>[])[0].id = 'g\0'))).toBe(
			'truth[0].id: contains a NUL character (U+0000) at index 1'
		);
	});

	it('writes an unknown field name into the reason as storable text', () => {
		expect(broken((f) => (f['co\0lour'] = 1))).toBe('co\\u0000lour: unknown field');
		expect(broken((f) => (estimate(f)['\ud800'] = 1))).toBe('estimates[0].\\ud800: unknown field');
		expect(broken((f) => (f['\u001b[31mred'] = 1))).toBe('\\u001b[31mred: unknown field');
		// cut at 40 units, never inside a surrogate pair
		expect(broken((f) => (f['k'.repeat(39) + '🚗🚗'] = 1))).toBe(
			`${'k'.repeat(39)}…: unknown field`
		);
		expect(broken((f) => (f['k'.repeat(38) + '🚗🚗'] = 1))).toBe(
			`${'k'.repeat(38)}🚗…: unknown field`
		);
	});

	it('checks ego', () => {
		expect(broken((f) => (f.ego = [1, 2, 3]))).toBe('ego: expected a map, got an array');
		expect(broken((f) => (f.ego = { x: 1, y: 2 }))).toBe('ego.heading: missing');
		expect(broken((f) => (f.ego = { x: NaN, y: 2, heading: 0 }))).toBe(
			'ego.x: expected a finite number, got NaN'
		);
		expect(broken((f) => (f.ego = { x: 1, y: 2, heading: 0, z: 1 }))).toBe('ego.z: unknown field');
		expect(broken((f) => (f.ego = null))).toBe('ego: expected a map, got null');
	});

	it('checks sets', () => {
		expect(broken((f) => (f.estimates = null))).toBe('estimates: expected an array, got null');
		expect(broken((f) => (f.truth = {}))).toBe('truth: expected an array, got a map');
		expect(broken((f) => (f.measurements = [5]))).toBe('measurements[0]: expected a map, got 5');
		const many = Array.from({ length: DEFAULT_LIMITS.maxSetSize + 1 }, () => ({ x: [0, 0, 0, 0] }));
		expect(broken((f) => (f.truth = many))).toBe('truth: 5001 items, at most 5000');
		const exactly = many.slice(1);
		expect(broken((f) => (f.truth = exactly))).toBe('ok');
	});

	it('checks truth objects × estimates, the pairs GOSPA may have to match', () => {
		const objects = (n: number) => Array.from({ length: n }, (_, i) => ({ x: [i, 0, 0, 0] }));
		const sets = (t: number, e: number) => (f: Record<string, unknown>) => {
			f.truth = objects(t);
			f.estimates = objects(e);
		};
		expect(DEFAULT_LIMITS.maxPairs).toBe(250_000);
		expect(broken(sets(500, 500))).toBe('ok');
		expect(broken(sets(5000, 50))).toBe('ok');
		expect(broken(sets(501, 500))).toBe(
			'truth: 501 objects × 500 estimates = 250500 pairs, at most 250000'
		);
		// without truth there is nothing to match; measurements never count
		expect(broken((f) => ((f.truth = undefined), (f.estimates = objects(5000))))).toBe('ok');
		expect(
			broken(
				(f) => (sets(500, 500)(f), (f.measurements = objects(5000).map(() => ({ z: [1, 2] }))))
			)
		).toBe('ok');
	});

	it('checks estimates', () => {
		expect(broken((f) => (estimate(f).x = [1, 2, 3]))).toBe('estimates[0].x: length 3, expected 4');
		expect(broken((f) => delete estimate(f).x)).toBe('estimates[0].x: missing');
		expect(broken((f) => (estimate(f).x = [1, 2, '3', 4]))).toBe(
			'estimates[0].x[2]: expected a finite number, got a string'
		);
		expect(broken((f) => (estimate(f).x = [1, 2, -Infinity, 4]))).toBe(
			'estimates[0].x[2]: expected a finite number, got -Infinity'
		);
		expect(broken((f) => (estimate(f).x = [1, 2, [3], 4]))).toBe(
			'estimates[0].x[2]: expected a finite number, got an array'
		);
		expect(broken((f) => (estimate(f).P = identity(4).slice(1)))).toBe(
			'estimates[0].P: length 15, expected 16'
		);
		expect(broken((f) => (estimate(f).r = 1.01))).toBe('estimates[0].r: 1.01 is outside [0, 1]');
		expect(broken((f) => (estimate(f).r = -0.1))).toBe('estimates[0].r: -0.1 is outside [0, 1]');
		expect(broken((f) => (estimate(f).r = 0))).toBe('ok');
		expect(broken((f) => (estimate(f).r = 1))).toBe('ok');
		expect(broken((f) => (estimate(f).r = NaN))).toBe(
			'estimates[0].r: expected a finite number, got NaN'
		);
		expect(broken((f) => (estimate(f).label = 'x'.repeat(65)))).toBe(
			'estimates[0].label: 65 characters, at most 64'
		);
		expect(broken((f) => (estimate(f).label = 4))).toBe(
			'estimates[0].label: expected a string, got 4'
		);
		expect(broken((f) => (estimate(f).vx = 4))).toBe('estimates[0].vx: unknown field');
	});

	it('checks ids', () => {
		expect(broken((f) => (estimate(f).id = 'x'.repeat(128)))).toBe('ok');
		expect(broken((f) => (estimate(f).id = 'x'.repeat(129)))).toBe(
			'estimates[0].id: 129 characters, at most 128'
		);
		expect(broken((f) => (estimate(f).id = ''))).toBe('estimates[0].id: must not be empty');
		expect(broken((f) => (estimate(f).id = -12))).toBe('ok');
		expect(broken((f) => (estimate(f).id = 1.5))).toBe(
			'estimates[0].id: expected a string or a safe integer, got 1.5'
		);
		expect(broken((f) => (estimate(f).id = 2 ** 60))).toMatch(
			/^estimates\[0\]\.id: expected a string or a safe/
		);
		expect(broken((f) => (estimate(f).id = null))).toBe(
			'estimates[0].id: expected a string or a safe integer, got null'
		);
		expect(broken((f) => ((f.truth as Record<string, unknown>[])[0].id = true))).toBe(
			'truth[0].id: expected a string or a safe integer, got a boolean'
		);
	});

	it('checks covariances: square, finite, non-negative diagonal, symmetric', () => {
		const p = identity(4, 2);
		p[1] = 0.5;
		p[4] = 0.7;
		expect(broken((f) => (estimate(f).P = p))).toBe(
			'estimates[0].P[1]: not symmetric: P[0,1] = 0.5 but P[1,0] = 0.7 (relative tolerance 0.000001)'
		);
		const close = identity(4, 2);
		close[1] = 0.5;
		close[4] = 0.5 * (1 + 1e-7);
		expect(broken((f) => (estimate(f).P = close))).toBe('ok');
		const neg = identity(4, 2);
		neg[5] = -1;
		expect(broken((f) => (estimate(f).P = neg))).toBe(
			'estimates[0].P[5]: negative variance -1 on the diagonal'
		);
		const nan = identity(4, 2);
		nan[3] = NaN;
		expect(broken((f) => (estimate(f).P = nan))).toBe(
			'estimates[0].P[3]: expected a finite number, got NaN'
		);
		expect(broken((f) => (measurement(f).R = [1, 0, 0]))).toBe(
			'measurements[0].R: length 3, expected 4'
		);
		expect(broken((f) => (measurement(f).R = [1, 0.2, 0.3, 1]))).toMatch(
			/^measurements\[0\]\.R\[1\]: not symmetric: R\[0,1\] = 0.2 but R\[1,0\] = 0.3/
		);
		const loose = problem(
			validateFrame(
				{ type: 'frame', seq: 0, t: 0, measurements: [{ z: [0, 0], R: [1, 0.2, 0.3, 1] }] },
				dims,
				resolveLimits({ symmetryTolerance: 0.5 })
			)
		);
		expect(loose).toBe('ok');
	});

	it('checks measurements', () => {
		expect(broken((f) => (measurement(f).z = [1]))).toBe('measurements[0].z: length 1, expected 2');
		expect(broken((f) => delete measurement(f).z)).toBe('measurements[0].z: missing');
		expect(broken((f) => (measurement(f).sensor = 'y'.repeat(65)))).toBe(
			'measurements[0].sensor: 65 characters, at most 64'
		);
		expect(broken((f) => (measurement(f).doppler = 3))).toBe(
			'measurements[0].doppler: unknown field'
		);
	});

	it('reports the first offending item', () => {
		const f = frame({
			estimates: [
				{ x: [0, 0, 0, 0] },
				{ x: [0, 0, 0, 0] },
				{ x: [0, 0, 0, 0] },
				{ x: [0, 0, 0, 0], P: identity(4).slice(1) },
				{ x: [0] }
			]
		});
		expect(check(f)).toBe('estimates[3].P: length 15, expected 16');
	});

	it('rejects huge arrays and deep nesting without walking them', () => {
		const huge = new Array<number>(10_000_000);
		let deep: unknown = 1;
		for (let i = 0; i < 100_000; i++) deep = [deep];
		const started = performance.now();
		expect(broken((f) => (estimate(f).x = huge))).toBe(
			'estimates[0].x: length 10000000, expected 4'
		);
		expect(broken((f) => (f.truth = huge))).toBe('truth: 10000000 items, at most 5000');
		expect(broken((f) => (estimate(f).x = [deep, 0, 0, 0]))).toBe(
			'estimates[0].x[0]: expected a finite number, got an array'
		);
		expect(broken((f) => (f.extra = deep))).toBe('extra: unknown field');
		expect(performance.now() - started).toBeLessThan(20);
	});

	it('catches NaN and Infinity that only MessagePack can carry', () => {
		const packr = new Packr({ useRecords: false });
		for (const bad of [NaN, Infinity, -Infinity]) {
			const bytes = packr.pack(frame({ truth: [{ x: [0, bad, 0, 0] }] }));
			const decoded = decodeMessage(bytes);
			expect(decoded.ok).toBe(true);
			if (!decoded.ok) continue;
			expect(check(decoded.msg)).toBe(`truth[0].x[1]: expected a finite number, got ${bad}`);
		}
	});

	it('rejects non-plain objects handed to it directly', () => {
		expect(broken((f) => (f.ego = new Map([['x', 1]])))).toBe('ego: expected a map, got a map');
		expect(broken((f) => (estimate(f).x = new Float64Array(4)))).toMatch(
			/^estimates\[0\]\.x: expected an array/
		);
	});

	it('readSeq reads seq alone', () => {
		expect(readSeq({ seq: 4 })).toBe(4);
		expect(readSeq({ seq: -4 })).toBeNull();
		expect(readSeq({})).toBeNull();
	});

	it('is fast enough for 5,000 frames per second with 80 objects and 20 covariances', () => {
		const estimates = Array.from({ length: 80 }, (_, i) => ({
			id: i,
			x: [i, i + 1, 0.5, 0.25],
			...(i < 20 ? { P: identity(4, 1 + i) } : {}),
			r: 0.5
		}));
		const truth = Array.from({ length: 40 }, (_, i) => ({ id: i, x: [i, i, 0, 0] }));
		const measurements = Array.from({ length: 60 }, (_, i) => ({ z: [i, -i] }));
		const f = frame({ estimates, truth, measurements });
		for (let i = 0; i < 500; i++) validateFrame(f, dims);
		const started = performance.now();
		for (let i = 0; i < 5000; i++) expect(validateFrame(f, dims).ok).toBe(true);
		expect(performance.now() - started).toBeLessThan(1000);
	});
});

describe('validateOpen', () => {
	const open = (run: Record<string, unknown> = {}, extra: Record<string, unknown> = {}) => ({
		type: 'open',
		client_run_id: 'drive-0042',
		run: {
			name: 'A9 northbound',
			state_fields: ['x', 'y', 'vx', 'vy'],
			measurement_fields: ['x', 'y'],
			coords: 'world',
			units: { length: 'm' },
			tags: ['radar'],
			notes: 'wet road',
			...run
		},
		...extra
	});
	const checkOpen = (msg: unknown) => problem(validateOpen(msg));

	it('accepts a full and a minimal open', () => {
		expect(checkOpen(open())).toBe('ok');
		expect(
			checkOpen({
				type: 'open',
				run: { name: 'n', state_fields: ['y', 'x'], measurement_fields: ['x', 'y'] }
			})
		).toBe('ok');
	});

	it('names the first offending path', () => {
		expect(checkOpen(open({}, { client_run_id: '' }))).toBe('client_run_id: must not be empty');
		expect(checkOpen(open({}, { client_run_id: 'c'.repeat(129) }))).toBe(
			'client_run_id: 129 characters, at most 128'
		);
		expect(checkOpen({ type: 'open' })).toBe('run: missing');
		expect(checkOpen(open({ name: '' }))).toBe('run.name: must not be empty');
		expect(checkOpen(open({ name: 'n'.repeat(201) }))).toBe(
			'run.name: 201 characters, at most 200'
		);
		expect(checkOpen(open({ state_fields: ['x', 'vx'] }))).toBe(
			'run.state_fields: must contain "y"'
		);
		expect(checkOpen(open({ measurement_fields: ['y'] }))).toBe(
			'run.measurement_fields: must contain "x"'
		);
		expect(checkOpen(open({ state_fields: ['x', 'y', 'x'] }))).toBe(
			'run.state_fields[2]: duplicate field "x"'
		);
		expect(checkOpen(open({ state_fields: ['x', 'y', 'f'.repeat(33)] }))).toBe(
			'run.state_fields[2]: 33 characters, at most 32'
		);
		const seventeen = ['x', 'y', ...Array.from({ length: 15 }, (_, i) => `s${i}`)];
		expect(checkOpen(open({ state_fields: seventeen }))).toBe(
			'run.state_fields: 17 fields, at most 16'
		);
		expect(checkOpen(open({ coords: 'utm' }))).toBe('run.coords: expected "world" or "ego"');
		expect(checkOpen(open({ units: { length: 'ft' } }))).toBe('run.units.length: expected "m"');
		expect(checkOpen(open({ tags: ['a', 3] }))).toBe('run.tags[1]: expected a string, got 3');
		expect(checkOpen(open({ notes: 5 }))).toBe('run.notes: expected a string, got 5');
		expect(checkOpen(open({ colour: 'red' }))).toBe('run.colour: unknown field');
		expect(checkOpen(open({}, { version: 2 }))).toBe('version: unknown field');
	});

	it('refuses NUL and unpaired surrogates in every string it stores', () => {
		const nul = 'contains a NUL character (U+0000) at index 1';
		expect(checkOpen(open({}, { client_run_id: 'c\0' }))).toBe(`client_run_id: ${nul}`);
		expect(checkOpen(open({ name: 'n\0' }))).toBe(`run.name: ${nul}`);
		expect(checkOpen(open({ state_fields: ['x', 'y', 'v\0'] }))).toBe(
			`run.state_fields[2]: ${nul}`
		);
		expect(checkOpen(open({ measurement_fields: ['x', 'y\0'] }))).toBe(
			`run.measurement_fields[1]: ${nul}`
		);
		expect(checkOpen(open({ tags: ['ok', 't\0'] }))).toBe(`run.tags[1]: ${nul}`);
		expect(checkOpen(open({ notes: 'n\0tes' }))).toBe(`run.notes: ${nul}`);
		expect(checkOpen(open({ name: 'n\udfff' }))).toBe(
			'run.name: contains an unpaired surrogate (U+DFFF) at index 1'
		);
		expect(checkOpen(open({ name: 'Nachtfahrt Süd 🌙' }))).toBe('ok');
		expect(checkOpen(open({ 'co\0ords': 'x' }))).toBe('run.co\\u0000ords: unknown field');
	});
});
