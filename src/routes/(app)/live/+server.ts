import { json } from '@sveltejs/kit';
import { readLiveStats } from '$lib/viewer/live-protocol';
import type { RequestHandler } from './$types';

/**
 * The Live board as JSON (`accept: application/json`): who is watching, and how far each viewer's outbox is
 * behind. A viewer never has more than one frame pending, however slow it reads.
 */
export const GET: RequestHandler = () => json(readLiveStats(), { headers: { 'cache-control': 'no-store' } });
