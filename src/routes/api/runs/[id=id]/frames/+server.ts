import { json } from '@sveltejs/kit';
import { pack } from '$lib/msgpack';
import { frameQuery } from '$lib/validation/runs';
import { ApiError, endpoint } from '$server/api';
import { getRun } from '$server/runs';
import { readFrames } from '$server/runs/frames';
import { readQuery } from '$server/query';
import type { RequestHandler } from './$types';

/** Frames as the rig sent them; JSON, or MessagePack with `Accept: application/x-msgpack`. Paginate with next_from_seq. */
export const GET: RequestHandler = endpoint(async ({ params, url, request }) => {
	const q = readQuery(url, frameQuery);
	if (!(await getRun(params.id))) throw new ApiError('not_found', 'No such run');
	const page = await readFrames(params.id, {
		fromSeq: q.from_seq,
		toSeq: q.to_seq,
		from: q.from,
		to: q.to,
		limit: q.limit
	});
	if ((request.headers.get('accept') ?? '').includes('application/x-msgpack')) {
		return new Response(new Uint8Array(pack(page)), {
			headers: { 'content-type': 'application/x-msgpack' }
		});
	}
	return json(page);
});
