import { describe, expect, it } from 'vitest';
import { deriveSeed, Rng } from '../random';
import { SCENARIOS, getScenario, listScenarios } from './scenarios';
import { frameAt, simulate, simulateFrom, type SimStep } from './simulate';
import { EgoTrack } from './world';

const take = (name: string, seed: number, durationS: number, extra: object = {}): SimStep[] => [
	...simulate(name, { seed, durationS, ...extra })
];

describe('seeded random numbers', () => {
	it('normal and Poisson draws have the right mean and variance', () => {
		const rng = new Rng(12345);
		const n = 20000;
		let s = 0;
		let s2 = 0;
		for (let i = 0; i < n; i++) {
			const x = rng.normal(2, 3);
			s += x;
			s2 += x * x;
		}
		const mean = s / n;
		// 5 standard errors: 3/√20000 ≈ 0.021 for the mean (common practice for a seeded check).
		expect(Math.abs(mean - 2)).toBeLessThan(5 * (3 / Math.sqrt(n)));
		expect(Math.abs(s2 / n - mean * mean - 9)).toBeLessThan(5 * 9 * Math.sqrt(2 / n));
		let p = 0;
		for (let i = 0; i < n; i++) p += rng.poisson(30);
		// Poisson(30): mean 30, standard error √(30/n).
		expect(Math.abs(p / n - 30)).toBeLessThan(5 * Math.sqrt(30 / n));
	});

	it('streams derived from one seed differ', () => {
		expect(deriveSeed(1, 'truth')).not.toBe(deriveSeed(1, 'sensor'));
		expect(deriveSeed(1, 'truth')).not.toBe(deriveSeed(2, 'truth'));
	});
});

describe('scenarios', () => {
	it('lists at least three with unique names, a frame period and birth regions', () => {
		const list = listScenarios();
		expect(list.length).toBeGreaterThanOrEqual(3);
		expect(new Set(list.map((s) => s.name)).size).toBe(list.length);
		for (const s of SCENARIOS) {
			expect(s.dt).toBe(0.05);
			expect(s.durationS).toBeGreaterThanOrEqual(120);
			expect(s.births.length).toBeGreaterThan(0);
		}
		expect(() => getScenario('no-such-place')).toThrow();
	});

	it('ego loops are continuous and come back to the start', () => {
		for (const s of SCENARIOS) {
			const track = new EgoTrack(s.ego.start, s.ego.legs);
			let prev = track.at(0);
			const step = 0.05;
			// Ego speeds here stay under 30 m/s, so one step moves it at most 1.5 m.
			for (let t = step; t < Math.min(s.durationS, 2 * track.loopDuration); t += step) {
				const p = track.at(t);
				expect(Math.hypot(p.x - prev.x, p.y - prev.y)).toBeLessThan(1.5);
				prev = p;
			}
		}
	});

	it('the number of objects in view changes over a run', () => {
		for (const s of SCENARIOS) {
			const counts = new Set(take(s.name, 3, 90).map((f) => f.frame.truth?.length));
			expect(counts.size, s.name).toBeGreaterThan(2);
		}
	});
});

describe('determinism and resuming', () => {
	const name = 'lanternfall-crossing';

	it('the same seed gives identical frames', () => {
		expect(take(name, 7, 30)).toEqual(take(name, 7, 30));
	});

	it('a different seed gives different frames', () => {
		const a = take(name, 7, 30).map((s) => s.frame.measurements);
		const b = take(name, 8, 30).map((s) => s.frame.measurements);
		expect(a).not.toEqual(b);
	});

	it('restarting at frame k gives the same frame k and what follows', () => {
		const all = take(name, 7, 30);
		const k = 437;
		expect(frameAt(name, { seed: 7, durationS: 30 }, k)).toEqual(all[k]);
		const resumed = [...simulateFrom(name, { seed: 7, durationS: 30 }, k)];
		expect(resumed).toEqual(all.slice(k));
		expect(() => frameAt(name, { seed: 7, durationS: 1 }, 100)).toThrow(RangeError);
	});

	it('frames carry protocol fields: seq from 0, t from the start epoch, 4-state estimates', () => {
		const steps = take(name, 7, 20, { startEpoch: 1000 });
		expect(steps[0].frame.seq).toBe(0);
		expect(steps[3].frame.t).toBeCloseTo(1000.15, 9);
		for (const s of steps)
			for (const e of s.frame.estimates ?? []) {
				expect(e.x).toHaveLength(4);
				expect(e.P).toHaveLength(16);
				expect(e.r).toBeGreaterThanOrEqual(0);
				expect(e.r).toBeLessThanOrEqual(1);
			}
		expect(steps[0].frame.measurements?.[0]?.sensor ?? 'roof-halo').toBe('roof-halo');
	});

	it('the clutter rate does not change the truth', () => {
		const a = take(name, 7, 20).map((s) => s.frame.truth);
		const b = take(name, 7, 20, { clutterRate: 40 }).map((s) => s.frame.truth);
		expect(b).toEqual(a);
	});

	it('attaches the full mixture on request, summing to the expected cardinality', () => {
		const steps = take(name, 7, 5, { withMixture: true });
		const last = steps[steps.length - 1];
		const sum = (last.mixture ?? []).reduce((a, c) => a + c.w, 0);
		expect(sum).toBeCloseTo(last.expectedCardinality, 12);
	});
});

describe('scripted incidents', () => {
	const near = (a: readonly number[], b: readonly number[], d: number) =>
		Math.hypot(a[0] - b[0], a[1] - b[1]) < d;

	for (const s of SCENARIOS) {
		it(`${s.name}: the occluded object is lost and dense clutter spawns a false track`, () => {
			const withIncidents = take(s.name, 1, s.durationS);
			const without = take(s.name, 1, s.durationS, { incidents: false });
			for (const inc of s.incidents) {
				const inWindow = (st: SimStep) => st.frame.t >= inc.fromS && st.frame.t < inc.toS;
				const window = withIncidents.filter(inWindow);
				expect(window.every((st) => st.activeIncidents.includes(inc.label))).toBe(true);
				if (inc.kind === 'occlusion') {
					// The hidden object: in view all through the window, yet measured within 2 m in under 10 % of
					// its frames (stray clutter or a neighbour's return may land near it); with p_D ≥ 0.85 a
					// visible object falls that low with negligible probability.
					const hidden = (window[0].frame.truth ?? []).filter((t) => {
						let measured = 0;
						for (const st of window) {
							const tr = st.frame.truth?.find((o) => o.id === t.id);
							if (!tr) return false;
							if ((st.frame.measurements ?? []).some((m) => near(m.z, tr.x, 2))) measured++;
						}
						return measured < 0.1 * window.length;
					});
					expect(hidden, inc.label).toHaveLength(1);
					// By the window's last second the filter has no estimate within 3 m of it.
					for (const st of window.slice(-Math.round(1 / s.dt))) {
						const tr = st.frame.truth?.find((o) => o.id === hidden[0].id);
						expect(tr).toBeDefined();
						if (tr) expect((st.frame.estimates ?? []).some((e) => near(e.x, tr.x, 3))).toBe(false);
					}
				} else {
					// Seconds in the window with an estimate more than 5 m from every true object.
					const falseSeconds = (steps: SimStep[]) =>
						steps
							.filter(inWindow)
							.filter((st) =>
								(st.frame.estimates ?? []).some((e) =>
									(st.frame.truth ?? []).every((t) => !near(e.x, t.x, 5))
								)
							).length * s.dt;
					expect(falseSeconds(withIncidents), inc.label).toBeGreaterThan(2);
					expect(falseSeconds(withIncidents)).toBeGreaterThan(falseSeconds(without) + 1);
				}
			}
		});
	}
});
