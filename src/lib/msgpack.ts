/**
 * MessagePack, configured once for the whole project: ingest decoding and storage, the frames API, the viewer
 * socket on both ends, the Run screen's frame fetches, tools and tests.
 *
 * Plain MessagePack only: maps become plain objects, no record extension, 64-bit integers become numbers
 * (anything outside the safe range then fails the protocol's integer checks instead of turning into a BigInt
 * nobody expects), undefined properties are left out as JSON.stringify does, and map headers are as small
 * as the number of keys allows.
 */
import { Packr, type Options } from 'msgpackr';

const options: Options & { skipValues: unknown[] } = {
	useRecords: false,
	mapsAsObjects: true,
	int64AsType: 'number',
	variableMapSize: true,
	moreTypes: false,
	structuredClone: false,
	bundleStrings: false,
	skipValues: [undefined]
};
const packr = new Packr(options);

export function pack(value: unknown): Uint8Array {
	return packr.pack(value);
}

export function unpack(bytes: Uint8Array): unknown {
	return packr.unpack(bytes);
}
