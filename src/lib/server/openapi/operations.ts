/**
 * What each API endpoint under src/routes/api takes and answers, for the API document. The query and body
 * schemas are the very zod schemas the endpoints validate with; who may call an endpoint comes from
 * src/lib/server/access.ts, not from here. A unit test walks the route files and fails on any endpoint
 * (route and method) missing here, or listed here but not served.
 */
import type { z } from 'zod';
import { metricSettingsSchema } from '$lib/metrics/settings';
import { auditQuery } from '$lib/validation/audit';
import { inviteSchema, patchPersonSchema, tokenNameSchema } from '$lib/validation/people';
import {
	createKeySchema,
	createRigSchema,
	labelKeySchema,
	patchRigSchema,
	rotateKeySchema
} from '$lib/validation/rigs';
import {
	frameQuery,
	newPinSchema,
	pageQuery,
	pinListQuery,
	runSearchQuery,
	seriesQuery
} from '$lib/validation/runs';
import { metricsQuery } from '$server/metrics/query';

export const methods = ['get', 'post', 'put', 'patch', 'delete'] as const;
export type Method = (typeof methods)[number];

export interface Operation {
	/** the group it is listed under */
	tag: string;
	summary: string;
	description?: string;
	query?: z.ZodType;
	/** a JSON body */
	body?: z.ZodType;
	/** the success status; 200 unless said */
	status?: number;
	/** what a success answers */
	answers: string;
	/** content types besides application/json the answer can come in */
	alsoAs?: string[];
}

export const tags = ['Runs', 'Pins', 'Rigs & keys', 'People', 'Personal tokens', 'Operations'];

export const operations: Record<string, Partial<Record<Method, Operation>>> = {
	'/api/runs': {
		get: {
			tag: 'Runs',
			summary: 'Search runs',
			description:
				'Live runs first; filter by rig, status, tag, start date (since/until) and text (q); sort and dir; limit/offset.',
			query: runSearchQuery,
			answers: '`{runs, total}`'
		}
	},
	'/api/runs/[id=id]': {
		get: { tag: 'Runs', summary: 'One run', answers: '`{run}`' }
	},
	'/api/runs/[id=id]/frames': {
		get: {
			tag: 'Runs',
			summary: 'Frames as the rig sent them',
			description:
				'By seq range (from_seq/to_seq) or time range (from/to, seconds from run start); paginate with `next_from_seq`. Send `Accept: application/x-msgpack` for MessagePack.',
			query: frameQuery,
			answers: '`{frames, next_from_seq}`',
			alsoAs: ['application/x-msgpack']
		}
	},
	'/api/runs/[id=id]/quarantine': {
		get: {
			tag: 'Runs',
			summary: "The run's quarantined input",
			description: 'Rejected messages, raw, with the reason.',
			query: pageQuery,
			answers: '`{quarantine}`'
		}
	},
	'/api/runs/[id=id]/metrics': {
		get: {
			tag: 'Runs',
			summary: 'Per-frame metric rows, streamed',
			description:
				'The stored rows, or with `c` or `p` rows computed for this request from the stored frames. CSV with `Accept: text/csv` or `format=csv` (one `zone:<name>` column per zone).',
			query: metricsQuery,
			answers: '`{run_id, unit, source, settings, rows, next_from_seq}`',
			alsoAs: ['text/csv']
		}
	},
	'/api/runs/[id=id]/summary': {
		get: {
			tag: 'Runs',
			summary: 'Run-level figures with their units',
			description:
				"From the cache while it matches the run's settings and frames; otherwise computed first (`recomputed: true`).",
			answers: '`{run_id, units, settings, computed_at, recomputed, frames, summary}`'
		}
	},
	'/api/runs/[id=id]/settings': {
		get: {
			tag: 'Runs',
			summary: "The run's metric settings",
			description: 'Defaults when none were saved, and where the last recompute stands.',
			answers: '`{settings, defaults, state_fields, unit, recompute}`'
		},
		put: {
			tag: 'Runs',
			summary: 'Replace the metric settings',
			description:
				"Queues a recompute of the run's stored metric columns. Weights, if sent, give one per state field.",
			body: metricSettingsSchema,
			answers: '`{settings, recompute}`'
		}
	},
	'/api/runs/[id=id]/series': {
		get: {
			tag: 'Runs',
			summary: 'Metric columns downsampled for the strips',
			description:
				'Min, max and mean per time bucket; from/to in seconds from run start. `series` is null for a run without frames.',
			query: seriesQuery,
			answers: '`{series}`'
		}
	},
	'/api/runs/[id=id]/pins': {
		get: { tag: 'Pins', summary: "The run's pins", answers: '`{pins}`' },
		post: {
			tag: 'Pins',
			summary: 'Pin a moment',
			description: 't in seconds from run start, with the view it was seen in; marks the run kept.',
			body: newPinSchema,
			status: 201,
			answers: '`{pin}`'
		}
	},
	'/api/pins': {
		get: {
			tag: 'Pins',
			summary: 'Every pin, newest first',
			query: pinListQuery,
			answers: '`{pins, total}`'
		}
	},
	'/api/rigs': {
		get: { tag: 'Rigs & keys', summary: 'Rigs', answers: '`{rigs}`' },
		post: {
			tag: 'Rigs & keys',
			summary: 'Add a rig',
			body: createRigSchema,
			status: 201,
			answers: '`{rig}`'
		}
	},
	'/api/rigs/[id=id]': {
		get: { tag: 'Rigs & keys', summary: 'One rig and its feed keys', answers: '`{rig, keys}`' },
		patch: {
			tag: 'Rigs & keys',
			summary: 'Rename, describe or archive a rig',
			description: "Archiving stops the rig's keys at once.",
			body: patchRigSchema,
			answers: '`{rig}`'
		}
	},
	'/api/rigs/[id=id]/keys': {
		get: { tag: 'Rigs & keys', summary: "The rig's feed keys", answers: '`{keys}`' },
		post: {
			tag: 'Rigs & keys',
			summary: 'Make a feed key',
			description: 'The answer is the only place the secret ever appears.',
			body: createKeySchema,
			status: 201,
			answers: '`{key: {id, prefix, label, expiresAt, secret}}`'
		}
	},
	'/api/keys/[id=id]': {
		get: { tag: 'Rigs & keys', summary: 'One feed key', answers: '`{key}`' },
		patch: {
			tag: 'Rigs & keys',
			summary: 'Relabel a feed key',
			body: labelKeySchema,
			answers: '`{key}`'
		}
	},
	'/api/keys/[id=id]/revoke': {
		post: {
			tag: 'Rigs & keys',
			summary: 'Revoke a feed key',
			description:
				'No body. A revoked key stays listed for the audit trail; open sockets on it are closed.',
			answers: '`{key}`'
		}
	},
	'/api/keys/[id=id]/rotate': {
		post: {
			tag: 'Rigs & keys',
			summary: 'Rotate a feed key',
			description:
				"The new key's secret comes back once; the old key works until the grace period ends.",
			body: rotateKeySchema,
			status: 201,
			answers: '`{key: {id, prefix, label, expiresAt, secret}, previous}`'
		}
	},
	'/api/people': {
		get: { tag: 'People', summary: 'People', answers: '`{people}`' },
		post: {
			tag: 'People',
			summary: 'Invite a person',
			description: 'Sends the invite link by mail.',
			body: inviteSchema,
			status: 201,
			answers: '`{invite: {id, email, role, expiresAt}}`'
		}
	},
	'/api/people/[id=id]': {
		get: { tag: 'People', summary: 'One person', answers: '`{person}`' },
		patch: {
			tag: 'People',
			summary: "Change a person's role or deactivate them",
			description: 'Nobody can deactivate themselves.',
			body: patchPersonSchema,
			answers: '`{person}`'
		}
	},
	'/api/me': {
		get: {
			tag: 'Personal tokens',
			summary: 'Who is calling',
			description:
				'The signed-in person, how they came in (session or token) and what they may do.',
			answers: '`{user, via, allowed}`'
		}
	},
	'/api/tokens': {
		get: { tag: 'Personal tokens', summary: 'Your personal API tokens', answers: '`{tokens}`' },
		post: {
			tag: 'Personal tokens',
			summary: 'Make a personal API token',
			description:
				'The answer is the only place the secret ever appears; send it as `Authorization: Bearer …`.',
			body: tokenNameSchema,
			status: 201,
			answers: '`{token: {id, name, secret}}`'
		}
	},
	'/api/tokens/[id=id]': {
		delete: {
			tag: 'Personal tokens',
			summary: 'Revoke one of your tokens',
			status: 204,
			answers: 'no body'
		}
	},
	'/api/audit': {
		get: {
			tag: 'Operations',
			summary: 'The audit log, newest first',
			query: auditQuery,
			answers: '`{entries}`'
		}
	},
	'/api/live': {
		get: {
			tag: 'Operations',
			summary: 'Open live viewers',
			description:
				"How far each one's outbox is behind (docs/live.md); a viewer never has more than one frame pending.",
			answers: 'the live viewer statistics'
		}
	},
	'/api/dev/mail': {
		get: {
			tag: 'Operations',
			summary: 'Mail the local catcher caught',
			description: 'Only where mail goes to the catcher instead of an SMTP server; 404 otherwise.',
			answers: '`{messages}`'
		}
	},
	'/api/openapi.json': {
		get: {
			tag: 'Operations',
			summary: 'This document',
			description: 'OpenAPI 3.1, built from the schemas the endpoints validate with.',
			answers: 'the OpenAPI document'
		}
	}
};
