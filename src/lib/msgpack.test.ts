import { describe, expect, it } from 'vitest';
import { pack, unpack } from './msgpack';

describe('the one MessagePack configuration', () => {
	it('writes plain maps with the smallest header, leaving undefined properties out', () => {
		const bytes = pack({ a: 1, b: undefined });
		// fixmap of one entry, "a", 1 — no record extension, no map 16 header, no undefined extension
		expect([...bytes]).toEqual([0x81, 0xa1, 0x61, 0x01]);
	});

	it('reads maps as plain objects and 64-bit integers as numbers', () => {
		// { n: uint64 2^40 }
		const bytes = Uint8Array.from([0x81, 0xa1, 0x6e, 0xcf, 0, 0, 1, 0, 0, 0, 0, 0]);
		const value = unpack(bytes) as Record<string, unknown>;
		expect(Object.getPrototypeOf(value)).toBe(Object.prototype);
		expect(value).toEqual({ n: 2 ** 40 });
		expect(typeof value.n).toBe('number');
	});

	it('round-trips a frame-shaped value', () => {
		const frame = { type: 'frame', t: 1.5, estimates: [{ id: 'a', x: [1, 2], r: 0.9 }] };
		expect(unpack(pack(frame))).toEqual(frame);
	});
});
