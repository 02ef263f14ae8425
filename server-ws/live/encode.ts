/**
 * MessagePack encoding of the viewer socket's messages. A committed frame is encoded once per run, whatever
 * the number of viewers; each viewer's counts are spliced in front of that body when it is sent.
 */
import type { FrameMetrics } from '../../src/lib/metrics/frame';
import { pack } from '../../src/lib/msgpack';
import type { Frame } from '../../src/lib/protocol/types';
import type {
	BoardMessage,
	HelloMessage,
	PongMessage,
	StateMessage
} from '../../src/lib/protocol/live';

export function encode(
	message: HelloMessage | StateMessage | PongMessage | BoardMessage
): Uint8Array {
	return pack(message);
}

/** Absent sets stay absent: keys with undefined values are left out instead of becoming MessagePack extensions. */
function defined<T extends object>(o: T): T {
	const out: Record<string, unknown> = {};
	for (const [k, v] of Object.entries(o)) if (v !== undefined) out[k] = v;
	return out as T;
}

/** The frame message without `type`, `skipped` and `quarantined`: a map of 5 entries. */
export function frameBody(
	seq: number,
	t: number,
	committedAt: number,
	frame: Frame,
	metrics: FrameMetrics | null
): Uint8Array {
	return pack({ seq, t, committed_at: committedAt, frame: defined(frame), metrics });
}

const countsHead = (skipped: number, quarantined: number) =>
	pack({ type: 'frame', skipped, quarantined }) as Uint8Array;

/** Entries and header length of a map header (fixmap, map 16, map 32). */
function mapHeader(bytes: Uint8Array): { entries: number; length: number } {
	const b = bytes[0];
	if (b >= 0x80 && b <= 0x8f) return { entries: b & 0x0f, length: 1 };
	if (b === 0xde) return { entries: (bytes[1] << 8) | bytes[2], length: 3 };
	if (b === 0xdf)
		return {
			entries: ((bytes[1] << 24) >>> 0) + ((bytes[2] << 16) | (bytes[3] << 8) | bytes[4]),
			length: 5
		};
	throw new Error('not a MessagePack map');
}

/** One flat map: type, skipped, quarantined, then the body's entries. */
export function frameWithCounts(
	body: Uint8Array,
	skipped: number,
	quarantined: number
): Uint8Array {
	const head = countsHead(skipped, quarantined);
	const h = mapHeader(head);
	const b = mapHeader(body);
	const entries = h.entries + b.entries;
	const out = Buffer.allocUnsafe(3 + head.length - h.length + body.length - b.length);
	out[0] = 0xde;
	out.writeUInt16BE(entries, 1);
	out.set(head.subarray(h.length), 3);
	out.set(body.subarray(b.length), 3 + head.length - h.length);
	return out;
}
