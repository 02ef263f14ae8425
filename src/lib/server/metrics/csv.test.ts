import { describe, expect, it } from 'vitest';
import { csvCell, csvLine } from './csv';

// Quoting and line ends follow RFC 4180 (Common Format and MIME Type for CSV Files), sections 2.1–2.7.
describe('csv', () => {
	it('writes numbers at full precision and leaves absent values empty', () => {
		expect(csvCell(0.1 + 0.2)).toBe('0.30000000000000004');
		expect(csvCell(1e-9)).toBe('1e-9');
		expect(csvCell(-3)).toBe('-3');
		expect(csvCell(null)).toBe('');
		expect(csvCell(undefined)).toBe('');
		expect(csvCell(Number.NaN)).toBe('');
		expect(csvCell(Number.POSITIVE_INFINITY)).toBe('');
	});

	it('quotes cells holding commas, quotes, line breaks or edge spaces', () => {
		expect(csvCell('zone:ego lane 0–20 m')).toBe('zone:ego lane 0–20 m');
		expect(csvCell('zone:a,b')).toBe('"zone:a,b"');
		expect(csvCell('say "hi"')).toBe('"say ""hi"""');
		expect(csvCell('two\nlines')).toBe('"two\nlines"');
		expect(csvCell(' padded')).toBe('" padded"');
	});

	it('ends every line with CRLF', () => {
		expect(csvLine(['seq', 't', 'gospa'])).toBe('seq,t,gospa\r\n');
		expect(csvLine([3, 1.5, null])).toBe('3,1.5,\r\n');
	});
});
