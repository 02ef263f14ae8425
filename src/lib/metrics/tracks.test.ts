import { describe, expect, it } from 'vitest';
import { TrackAccumulator, type TrackObject } from './tracks';

const o = (id: string | number, x: number, y: number): TrackObject => ({ id, pos: [x, y] });

describe('TrackAccumulator (CLEAR MOT, Bernardin & Stiefelhagen 2008)', () => {
	it('scores a hand-worked five-frame sequence', () => {
		// Threshold 1. Truth A at (0,0) and B at (10,0) in every frame.
		// f0: est 1 near A → A–1; B missed.
		// f1: est 1 near A, est 2 near B → A–1, B–2 (B confirmed 0.1 s after it appeared).
		// f2: est 2 jumps to A, est 3 near B, est 9 far away → A–2 and B–3 are both mismatches; 9 false.
		// f3: est 2 on A, est 9 → A–2 kept; B missed (interrupted); 9 false.
		// f4: est 2 on A, est 3 near B → B resumes with 3: one fragmentation, no new mismatch.
		const A = (): TrackObject => o('A', 0, 0);
		const B = (): TrackObject => o('B', 10, 0);
		const acc = new TrackAccumulator(1);
		acc.add({ t: 0, truth: [A(), B()], estimates: [o(1, 0.1, 0)] });
		acc.add({ t: 0.1, truth: [A(), B()], estimates: [o(1, 0.2, 0), o(2, 10, 0.3)] });
		acc.add({ t: 0.2, truth: [A(), B()], estimates: [o(2, 0, 0.1), o(3, 10, 0.4), o(9, 50, 50)] });
		acc.add({ t: 0.3, truth: [A(), B()], estimates: [o(2, 0, 0), o(9, 50, 50)] });
		acc.add({ t: 0.4, truth: [A(), B()], estimates: [o(2, 0, 0), o(3, 10, 0.5)] });
		const r = acc.result();
		expect(r).toMatchObject({
			frames: 5,
			truthCount: 10,
			matches: 8,
			misses: 2,
			falsePositives: 2,
			idSwitches: 2,
			fragmentations: 1,
			truthObjects: 2,
			confirmed: 2,
			idsComplete: true
		});
		expect(r.mota).toBeCloseTo(1 - (2 + 2 + 2) / 10, 12); // 0.4
		expect(r.motp).toBeCloseTo((0.1 + 0.2 + 0.3 + 0.1 + 0.4 + 0 + 0 + 0.5) / 8, 12); // 0.2
		expect(r.latencyByTruth.A).toBe(0);
		expect(r.latencyByTruth.B).toBeCloseTo(0.1, 12);
		expect(r.falseTracks.count).toBe(1);
		expect(r.falseTracks.maxLifetime).toBeCloseTo(0.1, 12);
	});

	it('keeps a valid correspondence from the previous frame even if another estimate is closer', () => {
		const acc = new TrackAccumulator(1);
		acc.add({ t: 0, truth: [o('A', 0, 0)], estimates: [o(1, 0.5, 0)] });
		acc.add({ t: 1, truth: [o('A', 0, 0)], estimates: [o(1, 0.9, 0), o(2, 0, 0)] });
		const r = acc.result();
		expect(r).toMatchObject({ matches: 2, falsePositives: 1, idSwitches: 0 });
		expect(r.motp).toBeCloseTo(0.7, 12);
	});

	it('prefers more matches over a smaller distance sum, and gates at the threshold', () => {
		// Truth a (0,0), b (2,0); estimates 1 (1,0), 2 (3.1,0); T = 1.5. Taking b–1 (1.0) first would
		// strand a (3.1 from estimate 2); the optimum is a–1 (1.0) and b–2 (1.1). Then a pair at
		// 1.6 > T is no match.
		const acc = new TrackAccumulator(1.5);
		acc.add({ t: 0, truth: [o('a', 0, 0), o('b', 2, 0)], estimates: [o(1, 1, 0), o(2, 3.1, 0)] });
		acc.add({ t: 1, truth: [o('a', 0, 0)], estimates: [o(3, 1.6, 0)] });
		const r = acc.result();
		expect(r).toMatchObject({ matches: 2, misses: 1, falsePositives: 1 });
		expect(r.latencyByTruth).toEqual({ a: 0, b: 0 });
	});

	it('reports null figures without truth and flags missing ids', () => {
		const acc = new TrackAccumulator(2);
		acc.add({ t: 0, truth: [], estimates: [{ pos: [0, 0] }] });
		const r = acc.result();
		expect(r.mota).toBeNull();
		expect(r.motp).toBeNull();
		expect(r.idsComplete).toBe(false);
		expect(r.falsePositives).toBe(1);
		expect(() => new TrackAccumulator(0)).toThrow(RangeError);
	});
});
