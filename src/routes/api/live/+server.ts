import { json } from '@sveltejs/kit';
import type { LiveStats } from '$lib/api-types';
import { readLiveStats } from '$server/live/stats';
import type { RequestHandler } from './$types';

/**
 * Open live viewers and how far each one's outbox is behind (docs/live.md §4). A viewer never has more than
 * one frame pending, however slow it reads.
 */
export const GET: RequestHandler = () =>
	json(readLiveStats() satisfies LiveStats, { headers: { 'cache-control': 'no-store' } });
