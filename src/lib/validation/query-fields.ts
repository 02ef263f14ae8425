/**
 * Building blocks of the query-parameter schemas (`?limit=…&q=…`): every message names its parameter, and every
 * value that passes is one PostgreSQL takes (no NUL or other control characters in text, dates in the years
 * 1–9999, integers within the safe range), so no query string can reach the database and fail there.
 */
import { z } from 'zod';

const controlCharacters = /[\u0000-\u001f\u007f]/;

/** Free text: trimmed, at most `max` characters, no control characters (PostgreSQL text cannot hold a NUL). */
export function textParam(name: string, max: number) {
	return z
		.string({ error: `${name} must be text` })
		.trim()
		.max(max, `${name} must be at most ${max} characters`)
		.refine(
			(v) => !controlCharacters.test(v),
			`${name} must not contain control characters (such as NUL)`
		);
}

/** A whole number in [min, max]; a safe integer in any case. */
export function intParam(name: string, min: number, max: number = Number.MAX_SAFE_INTEGER) {
	const range = max === Number.MAX_SAFE_INTEGER ? `≥ ${min}` : `${min}..${max}`;
	return z.coerce
		.number({ error: `${name} must be a number` })
		.int(`${name} must be a whole number ${range}`)
		.min(min, `${name} must be ${range}`)
		.max(max, `${name} must be ${range}`);
}

/** A frame sequence number. */
export function seqParam(name: string) {
	return intParam(name, 0);
}

/** Seconds (from a run's first frame, or device time): finite, and within ±1e11 s (3,000 years) of zero. */
export function secondsParam(name: string) {
	return z.coerce
		.number({ error: `${name} must be a number` })
		.refine(Number.isFinite, `${name} must be a finite number`)
		.refine((v) => Math.abs(v) <= 1e11, `${name} must be within ±1e11 seconds`);
}

/** A calendar day, YYYY-MM-DD, in the years 0001–9999 (PostgreSQL has no year 0). */
export function dayParam(name: string) {
	return z.iso
		.date({ error: `${name} must be a date (YYYY-MM-DD)` })
		.refine((v) => v >= '0001-01-01', `${name} must be a date in the years 0001 to 9999`);
}
