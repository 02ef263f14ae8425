import { describe, expect, it } from 'vitest';
import { withDeadline } from './deadline';

describe('withDeadline', () => {
	it('passes an answer in time through, and its failure', async () => {
		await expect(withDeadline(Promise.resolve(7), 50, 'x')).resolves.toBe(7);
		await expect(withDeadline(Promise.reject(new Error('no')), 50, 'x')).rejects.toThrow('no');
	});

	it('gives up on work that never answers, saying what and how long', async () => {
		const never = new Promise<number>(() => {});
		await expect(withDeadline(never, 30, 'reading feed keys')).rejects.toThrow(
			'reading feed keys: no answer within 30 ms'
		);
	});
});
