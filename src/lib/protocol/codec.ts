/**
 * Decoding and encoding of single ingest messages (docs/protocol.md, "Encodings").
 * Binary messages are MessagePack, text messages JSON; replies use the encoding of what they answer.
 */
import { pack, unpack } from '../msgpack';
import { DEFAULT_LIMITS } from './limits';
import type { Encoding } from './types';

export type Decoded =
	| {
			ok: true;
			encoding: Encoding;
			msg: Record<string, unknown>;
			/** the message as received (JSON as UTF-8), for quarantine and storage */
			raw: Uint8Array;
	  }
	| { ok: false; encoding: Encoding; reason: string; raw: Uint8Array };

const utf8Decoder = new TextDecoder('utf-8', { fatal: true });
const utf8Encoder = new TextEncoder();

const scanRemaining = new Int32Array(64);
const scanIsMap = new Uint8Array(64);

/**
 * One iterative pass over a MessagePack message before msgpackr sees it: rejects what the
 * protocol never uses (extensions, binary, non-string map keys), nesting deeper than `maxDepth`,
 * containers that claim more items than bytes remain, truncation and trailing bytes.
 * Returns null when the message is plain MessagePack whose top level is a map.
 */
export function scanMsgpack(b: Uint8Array, maxDepth: number): string | null {
	const end = b.length;
	if (end === 0) return 'empty message';
	const first = b[0];
	if (!((first >= 0x80 && first <= 0x8f) || first === 0xde || first === 0xdf)) return 'not a map';
	const maxLevel = Math.min(maxDepth, scanRemaining.length - 1);
	let pos = 0;
	let depth = 0;
	scanRemaining[0] = 1;
	scanIsMap[0] = 0;
	while (depth >= 0) {
		if (scanRemaining[depth] === 0) {
			depth--;
			continue;
		}
		const left = --scanRemaining[depth];
		if (pos >= end) return 'truncated message';
		const token = b[pos++];
		const isKey = scanIsMap[depth] === 1 && (left & 1) === 1;
		if (isKey && !((token >= 0xa0 && token <= 0xbf) || (token >= 0xd9 && token <= 0xdb))) {
			return 'map key is not a string';
		}
		let count = -1;
		let map = 0;
		if (token <= 0x7f || token >= 0xe0) {
			// fixint
		} else if (token <= 0x8f) {
			count = token & 0x0f;
			map = 1;
		} else if (token <= 0x9f) {
			count = token & 0x0f;
		} else if (token <= 0xbf) {
			pos += token & 0x1f;
		} else {
			switch (token) {
				case 0xc0:
				case 0xc2:
				case 0xc3:
					break;
				case 0xca:
					pos += 4;
					break;
				case 0xcb:
					pos += 8;
					break;
				case 0xcc:
				case 0xd0:
					pos += 1;
					break;
				case 0xcd:
				case 0xd1:
					pos += 2;
					break;
				case 0xce:
				case 0xd2:
					pos += 4;
					break;
				case 0xcf:
				case 0xd3:
					pos += 8;
					break;
				case 0xd9:
					if (pos + 1 > end) return 'truncated message';
					pos += 1 + b[pos];
					break;
				case 0xda:
					if (pos + 2 > end) return 'truncated message';
					pos += 2 + ((b[pos] << 8) | b[pos + 1]);
					break;
				case 0xdb:
					if (pos + 4 > end) return 'truncated message';
					pos += 4 + readU32(b, pos);
					break;
				case 0xdc:
				case 0xde:
					if (pos + 2 > end) return 'truncated message';
					count = (b[pos] << 8) | b[pos + 1];
					pos += 2;
					map = token === 0xde ? 1 : 0;
					break;
				case 0xdd:
				case 0xdf:
					if (pos + 4 > end) return 'truncated message';
					count = readU32(b, pos);
					pos += 4;
					map = token === 0xdf ? 1 : 0;
					break;
				case 0xc4:
				case 0xc5:
				case 0xc6:
					return 'binary values are not used by the protocol';
				case 0xc1:
					return 'invalid MessagePack byte 0xc1';
				default:
					return 'MessagePack extension types are not used by the protocol';
			}
		}
		if (pos > end) return 'truncated message';
		if (count >= 0) {
			if (depth + 1 > maxLevel) return `nested deeper than ${maxLevel} levels`;
			const items = map === 1 ? count * 2 : count;
			if (items > end - pos) return 'container longer than the message';
			depth++;
			scanRemaining[depth] = items;
			scanIsMap[depth] = map;
		}
	}
	if (pos !== end) return 'trailing bytes after the message';
	return null;
}

function readU32(b: Uint8Array, pos: number): number {
	return ((b[pos] << 24) >>> 0) + ((b[pos + 1] << 16) | (b[pos + 2] << 8) | b[pos + 3]);
}

function isPlainMap(v: unknown): v is Record<string, unknown> {
	return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/**
 * Decodes one WebSocket message. `binary` says which kind of WebSocket message the bytes came in
 * (the `ws` package hands text messages over as bytes too); a string is always JSON.
 * Never throws.
 */
export function decodeMessage(
	data: Uint8Array | string,
	binary: boolean = typeof data !== 'string',
	maxDepth: number = DEFAULT_LIMITS.maxDepth
): Decoded {
	if (typeof data === 'string') return decodeJson(data, utf8Encoder.encode(data));
	if (!binary) {
		let text: string;
		try {
			text = utf8Decoder.decode(data);
		} catch {
			return { ok: false, encoding: 'json', reason: 'text message is not valid UTF-8', raw: data };
		}
		return decodeJson(text, data);
	}
	const problem = scanMsgpack(data, maxDepth);
	if (problem !== null) return { ok: false, encoding: 'msgpack', reason: problem, raw: data };
	let value: unknown;
	try {
		value = unpack(data);
	} catch (e) {
		return { ok: false, encoding: 'msgpack', reason: `not decodable: ${errorText(e)}`, raw: data };
	}
	if (!isPlainMap(value)) return { ok: false, encoding: 'msgpack', reason: 'not a map', raw: data };
	return { ok: true, encoding: 'msgpack', msg: value, raw: data };
}

function decodeJson(text: string, raw: Uint8Array): Decoded {
	let value: unknown;
	try {
		// V8's JSON.parse does not recurse on the native stack, so deep nesting cannot overflow it;
		// the validator never descends into anything it does not expect.
		value = JSON.parse(text);
	} catch (e) {
		return { ok: false, encoding: 'json', reason: `not decodable: ${errorText(e)}`, raw };
	}
	if (!isPlainMap(value)) return { ok: false, encoding: 'json', reason: 'not a map', raw };
	return { ok: true, encoding: 'json', msg: value, raw };
}

function errorText(e: unknown): string {
	const text = e instanceof Error ? e.message : String(e);
	return text.length > 120 ? `${text.slice(0, 120)}…` : text;
}

/** Encodes one message: MessagePack bytes or a JSON string. */
export function encodeMessage(msg: object, encoding: 'msgpack'): Uint8Array;
export function encodeMessage(msg: object, encoding: 'json'): string;
export function encodeMessage(msg: object, encoding: Encoding): Uint8Array | string;
export function encodeMessage(msg: object, encoding: Encoding): Uint8Array | string {
	return encoding === 'msgpack' ? pack(msg) : JSON.stringify(msg);
}

/** MessagePack bytes of a decoded map (what storage keeps for a frame that arrived as JSON). */
export function toMsgpack(value: object): Uint8Array {
	return pack(value);
}

/** Decodes MessagePack written by {@link toMsgpack} or received from a rig (for replay). */
export function fromMsgpack(bytes: Uint8Array): unknown {
	return unpack(bytes);
}

/** The bytes a stored frame keeps: what the rig sent if it was MessagePack, else its MessagePack form. */
export function storedFrameBytes(decoded: Extract<Decoded, { ok: true }>): Uint8Array {
	return decoded.encoding === 'msgpack' ? decoded.raw : pack(decoded.msg);
}
