import { error } from '@sveltejs/kit';
import { z } from 'zod';
import { can } from '$lib/permissions';
import {
	createKeySchema,
	labelKeySchema,
	rigDetailsSchema,
	rotateKeySchema,
	uuidField
} from '$lib/validation/rigs';
import { actorOf } from '$server/api';
import { formError, parseForm } from '$server/forms';
import {
	createFeedKey,
	describeRig,
	getFeedKey,
	getRig,
	labelFeedKey,
	listFeedKeys,
	renameRig,
	revokeFeedKey,
	rotateFeedKey,
	setRigArchived
} from '$server/rigs';
import { rigsFormFailure } from '$server/rigs/http';
import type { Actions, PageServerLoad } from './$types';

export const load = (async ({ params, locals }) => {
	const [rig, keys] = await Promise.all([getRig(params.id), listFeedKeys(params.id)]);
	if (!rig) error(404, 'No such rig');
	return { rig, keys, canManage: can(locals.user?.role, 'rigs:manage') };
}) satisfies PageServerLoad;

const keyIdSchema = z.object({ id: uuidField });

/** Key actions name a key by id; it must belong to the rig in the address. */
async function keyOfRig(rigId: string, keyId: string) {
	const key = await getFeedKey(keyId);
	return key && key.rigId === rigId ? key : null;
}

export const actions = {
	details: async ({ request, params, locals, getClientAddress }) => {
		const parsed = await parseForm(request, rigDetailsSchema);
		if (!parsed.ok) return parsed.failure;
		const actor = actorOf(locals, getClientAddress());
		try {
			await renameRig(actor, params.id, parsed.data.name);
			await describeRig(actor, params.id, parsed.data.description);
		} catch (err) {
			return rigsFormFailure(err, parsed.data);
		}
		return { done: 'Saved.' };
	},
	archive: async ({ request, params, locals, getClientAddress }) => {
		const parsed = await parseForm(
			request,
			z.object({ archived: z.enum(['true', 'false'], { error: 'archived must be true or false' }) })
		);
		if (!parsed.ok) return parsed.failure;
		const archived = parsed.data.archived === 'true';
		try {
			await setRigArchived(actorOf(locals, getClientAddress()), params.id, archived);
		} catch (err) {
			return rigsFormFailure(err);
		}
		return {
			done: archived ? 'Rig archived: its feed keys no longer open a feed.' : 'Rig back in service.'
		};
	},
	createKey: async ({ request, params, locals, getClientAddress }) => {
		const parsed = await parseForm(request, createKeySchema);
		if (!parsed.ok) return parsed.failure;
		try {
			const { key, secret } = await createFeedKey(
				actorOf(locals, getClientAddress()),
				params.id,
				parsed.data
			);
			return { newKey: { secret, prefix: key.prefix, label: key.label, rotated: false } };
		} catch (err) {
			return rigsFormFailure(err, { label: parsed.data.label });
		}
	},
	labelKey: async ({ request, params, locals, getClientAddress }) => {
		const parsed = await parseForm(request, keyIdSchema.and(labelKeySchema));
		if (!parsed.ok) return parsed.failure;
		if (!(await keyOfRig(params.id, parsed.data.id)))
			return formError(404, 'No such feed key on this rig');
		try {
			await labelFeedKey(actorOf(locals, getClientAddress()), parsed.data.id, parsed.data.label);
		} catch (err) {
			return rigsFormFailure(err);
		}
		return { done: 'Label saved.' };
	},
	revokeKey: async ({ request, params, locals, getClientAddress }) => {
		const parsed = await parseForm(request, keyIdSchema);
		if (!parsed.ok) return parsed.failure;
		if (!(await keyOfRig(params.id, parsed.data.id)))
			return formError(404, 'No such feed key on this rig');
		try {
			const key = await revokeFeedKey(actorOf(locals, getClientAddress()), parsed.data.id);
			return { done: `Feed key ${key.prefix}… revoked; rigs streaming with it are cut off.` };
		} catch (err) {
			return rigsFormFailure(err);
		}
	},
	rotateKey: async ({ request, params, locals, getClientAddress }) => {
		const parsed = await parseForm(request, keyIdSchema.and(rotateKeySchema));
		if (!parsed.ok) return parsed.failure;
		if (!(await keyOfRig(params.id, parsed.data.id)))
			return formError(404, 'No such feed key on this rig');
		try {
			const { key, secret } = await rotateFeedKey(
				actorOf(locals, getClientAddress()),
				parsed.data.id,
				parsed.data.grace_minutes
			);
			return { newKey: { secret, prefix: key.prefix, label: key.label, rotated: true } };
		} catch (err) {
			return rigsFormFailure(err);
		}
	}
} satisfies Actions;
