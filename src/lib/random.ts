/**
 * The one seeded random source of the project: mulberry32 for uniforms, Box–Muller for normals,
 * Knuth's product method for Poisson counts. The simulator, the tests and the benchmarks all draw from
 * it, so a seed fixes what they see. Pure TypeScript, shared by server, browser and tools.
 */

/** Mixes a 32-bit seed with a stream name, so truth and sensor noise draw from independent streams. */
export function deriveSeed(seed: number, stream: string): number {
	let h = (seed ^ 0x9e3779b9) >>> 0;
	for (let i = 0; i < stream.length; i++) {
		h = Math.imul(h ^ stream.charCodeAt(i), 0x85ebca6b);
		h = (h ^ (h >>> 13)) >>> 0;
	}
	h = Math.imul(h ^ (h >>> 16), 0x7feb352d);
	h = Math.imul(h ^ (h >>> 15), 0x846ca68b);
	return (h ^ (h >>> 16)) >>> 0;
}

export class Rng {
	#state: number;
	#spare: number | null = null;

	constructor(seed: number) {
		this.#state = seed >>> 0;
	}

	/** Uniform in [0, 1). */
	next(): number {
		this.#state = (this.#state + 0x6d2b79f5) >>> 0;
		let t = this.#state;
		t = Math.imul(t ^ (t >>> 15), t | 1);
		t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
		return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
	}

	uniform(lo: number, hi: number): number {
		return lo + (hi - lo) * this.next();
	}

	/** Integer in [0, n). */
	int(n: number): number {
		return Math.floor(this.next() * n);
	}

	pick<T>(items: readonly T[]): T {
		return items[this.int(items.length)];
	}

	normal(mean = 0, sd = 1): number {
		if (this.#spare !== null) {
			const z = this.#spare;
			this.#spare = null;
			return mean + sd * z;
		}
		let u = this.next();
		while (u <= Number.MIN_VALUE) u = this.next();
		const v = this.next();
		const r = Math.sqrt(-2 * Math.log(u));
		this.#spare = r * Math.sin(2 * Math.PI * v);
		return mean + sd * r * Math.cos(2 * Math.PI * v);
	}

	/** Poisson count; the product method is exact and fast for the small means used here (< ~100). */
	poisson(mean: number): number {
		if (mean <= 0) return 0;
		if (mean > 200) return Math.max(0, Math.round(this.normal(mean, Math.sqrt(mean))));
		const limit = Math.exp(-mean);
		let k = 0;
		let p = this.next();
		while (p > limit) {
			k++;
			p *= this.next();
		}
		return k;
	}

	/** Waiting time of a Poisson process with the given rate (events per second). */
	exponential(rate: number): number {
		return -Math.log(1 - this.next()) / rate;
	}
}

/** The uniform draws of a fresh `Rng`, as a plain function (for code that takes `() => number`). */
export function seededRandom(seed: number): () => number {
	const rng = new Rng(seed);
	return () => rng.next();
}

/** Standard normal draws of a fresh `Rng`, as a plain function. */
export function seededNormal(seed: number): () => number {
	const rng = new Rng(seed);
	return () => rng.normal();
}
