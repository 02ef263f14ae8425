import { Packr, addExtension } from 'msgpackr';
import { describe, expect, it } from 'vitest';
import {
	decodeMessage,
	encodeMessage,
	fromMsgpack,
	scanMsgpack,
	storedFrameBytes,
	toMsgpack
} from './codec';

const frame = {
	type: 'frame',
	seq: 3,
	t: 1_700_000_000.125,
	ego: { x: 1.5, y: -2, heading: 3.14159 },
	estimates: [{ id: 'a', x: [1.25, 2, 3, 4], P: [1, 0, 0, 1], r: 0.75 }],
	truth: []
};

const plain = new Packr({ useRecords: false });

function reason(data: Uint8Array | string, binary?: boolean): string {
	const d = decodeMessage(data, binary);
	return d.ok ? 'ok' : d.reason;
}

describe('codec round trips', () => {
	it('MessagePack: encode → decode gives the same map, absent and empty sets kept apart', () => {
		const bytes = encodeMessage(frame, 'msgpack');
		expect(bytes).toBeInstanceOf(Uint8Array);
		const d = decodeMessage(bytes);
		expect(d.ok && d.encoding).toBe('msgpack');
		if (!d.ok) return;
		expect(d.msg).toEqual(frame);
		expect(d.msg.truth).toEqual([]);
		expect('measurements' in d.msg).toBe(false);
		expect(Object.getPrototypeOf(d.msg)).toBe(Object.prototype);
		expect(d.raw).toBe(bytes);
	});

	it('JSON: a string and a text message decode alike', () => {
		const text = encodeMessage(frame, 'json');
		expect(typeof text).toBe('string');
		const fromString = decodeMessage(text);
		const fromBytes = decodeMessage(new TextEncoder().encode(text), false);
		for (const d of [fromString, fromBytes]) {
			expect(d.ok && d.encoding).toBe('json');
			if (d.ok) expect(d.msg).toEqual(frame);
		}
		if (fromString.ok) expect(new TextDecoder().decode(fromString.raw)).toBe(text);
	});

	it('undefined properties are left out, as JSON does, so absent stays absent', () => {
		const withUndefined = { ...frame, measurements: undefined };
		const d = decodeMessage(encodeMessage(withUndefined, 'msgpack'));
		expect(d.ok && 'measurements' in d.msg).toBe(false);
		expect(JSON.parse(encodeMessage(withUndefined, 'json'))).not.toHaveProperty('measurements');
	});

	it('stores MessagePack frames as received and JSON frames as their MessagePack form', () => {
		const bytes = encodeMessage(frame, 'msgpack');
		const m = decodeMessage(bytes);
		const j = decodeMessage(encodeMessage(frame, 'json'));
		if (!m.ok || !j.ok) throw new Error('decode failed');
		expect(storedFrameBytes(m)).toBe(bytes);
		expect(fromMsgpack(storedFrameBytes(j))).toEqual(frame);
		expect(fromMsgpack(toMsgpack({ estimates: [] }))).toEqual({ estimates: [] });
	});

	it('reads float32, float64 and 64-bit integers as plain numbers', () => {
		const f32 = new Packr({ useRecords: false, useFloat32: 1 }).pack({ type: 'frame', t: 0.5 });
		const d = decodeMessage(f32);
		expect(d.ok && d.msg.t).toBe(0.5);
		// uint64 7 and int64 -7, written by hand: 0xcf / 0xd3 with 8 bytes
		const bytes = Uint8Array.from([
			0x82, 0xa1, 0x61, 0xcf, 0, 0, 0, 0, 0, 0, 0, 7, 0xa1, 0x62, 0xd3, 0xff, 0xff, 0xff, 0xff,
			0xff, 0xff, 0xff, 0xf9
		]);
		const ints = decodeMessage(bytes);
		expect(ints.ok && ints.msg).toEqual({ a: 7, b: -7 });
		const huge = Uint8Array.from([0x81, 0xa1, 0x61, 0xcf, 0xff, 0, 0, 0, 0, 0, 0, 0]);
		const h = decodeMessage(huge);
		expect(h.ok && typeof h.msg.a).toBe('number');
		expect(h.ok && Number.isSafeInteger(h.msg.a)).toBe(false);
	});
});

describe('codec rejections', () => {
	it('rejects what is not a map', () => {
		expect(reason(plain.pack([1, 2]))).toBe('not a map');
		expect(reason(plain.pack('open'))).toBe('not a map');
		expect(reason(new Uint8Array(0))).toBe('empty message');
		expect(reason('[1,2]')).toBe('not a map');
		expect(reason('null')).toBe('not a map');
		expect(reason('{"type":')).toMatch(/^not decodable/);
		expect(reason(Uint8Array.from([0xff, 0xfe]), false)).toBe('text message is not valid UTF-8');
	});

	it('rejects truncated and trailing bytes, and lengths the message cannot hold', () => {
		const ok = plain.pack({ type: 'close' });
		expect(reason(ok.subarray(0, ok.length - 1))).toBe('truncated message');
		expect(reason(Uint8Array.from([...ok, 0xc0]))).toBe('trailing bytes after the message');
		// a map claiming 2^32-1 entries and an array claiming 2^32-1 items, in a few bytes
		expect(reason(Uint8Array.from([0xdf, 0xff, 0xff, 0xff, 0xff]))).toBe(
			'container longer than the message'
		);
		expect(reason(Uint8Array.from([0x81, 0xa1, 0x61, 0xdd, 0xff, 0xff, 0xff, 0xff, 1]))).toBe(
			'container longer than the message'
		);
		expect(reason(Uint8Array.from([0x81, 0xa1, 0x61, 0xdb, 0xff, 0xff, 0xff, 0xff]))).toBe(
			'truncated message'
		);
	});

	it('rejects deep nesting before decoding, without overflowing the stack', () => {
		const depth = 200_000;
		const bytes = new Uint8Array(depth + 4);
		bytes.set([0x81, 0xa1, 0x61]);
		bytes.fill(0x91, 3, depth + 3);
		bytes[depth + 3] = 0xc0;
		expect(reason(bytes)).toBe('nested deeper than 8 levels');
		const json = `{"a":${'['.repeat(depth)}${']'.repeat(depth)}}`;
		expect(() => decodeMessage(json)).not.toThrow();
	});

	it('rejects extensions, records, binary and non-string keys', () => {
		const records = new Packr({ useRecords: true }).pack([{ b: 1 }, { b: 2 }]);
		expect(reason(records)).toBe('not a map');
		expect(reason(Uint8Array.from([0x81, 0xa1, 0x61, ...records]))).toBe(
			'MessagePack extension types are not used by the protocol'
		);
		expect(reason(plain.pack({ t: new Date(0) }))).toBe(
			'MessagePack extension types are not used by the protocol'
		);
		expect(reason(plain.pack({ b: Buffer.from([1, 2]) }))).toBe(
			'binary values are not used by the protocol'
		);
		expect(reason(Uint8Array.from([0x81, 0x01, 0x02]))).toBe('map key is not a string');
		expect(reason(Uint8Array.from([0x81, 0xa1, 0x61, 0xc1]))).toBe('invalid MessagePack byte 0xc1');
		class Custom {}
		addExtension({
			Class: Custom,
			type: 42,
			pack: () => Buffer.from([1]),
			unpack: () => new Custom()
		});
		expect(reason(plain.pack({ c: new Custom() }))).toBe(
			'MessagePack extension types are not used by the protocol'
		);
	});

	it('scanMsgpack accepts every plain type', () => {
		const all = plain.pack({
			n: null,
			b: [true, false],
			i: [0, 127, 128, 255, 65535, 2 ** 32 - 1, 2 ** 40, -1, -33, -129, -32769, -(2 ** 31) - 1],
			f: [0.5, 1e300],
			s: ['', 'x'.repeat(31), 'y'.repeat(255), 'z'.repeat(70_000)],
			m: Object.fromEntries(Array.from({ length: 20 }, (_, i) => [`k${i}`, i])),
			a: Array.from({ length: 70_000 }, () => 1)
		});
		expect(scanMsgpack(all, 8)).toBeNull();
	});

	it('never throws on random bytes', () => {
		let seed = 12345;
		const next = () => ((seed = (seed * 1103515245 + 12345) >>> 0) >>> 24) & 0xff;
		for (let n = 0; n < 2000; n++) {
			const bytes = Uint8Array.from({ length: 1 + (n % 64) }, next);
			bytes[0] = 0x80 | (bytes[0] & 0x0f);
			expect(() => decodeMessage(bytes)).not.toThrow();
			expect(() => decodeMessage(bytes, false)).not.toThrow();
		}
	});
});
