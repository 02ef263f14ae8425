import { z } from 'zod';

export const rigNameField = z
	.string({ error: 'Enter a rig name' })
	.trim()
	.min(1, 'Enter a rig name')
	.max(80, 'At most 80 characters');

export const rigDescriptionField = z
	.string({ error: 'Description must be text' })
	.trim()
	.max(500, 'At most 500 characters');

export const keyLabelField = z
	.string({ error: 'Label must be text' })
	.trim()
	.max(80, 'At most 80 characters');

/** Rotation grace: from 0 (the old key stops at once) to 7 days, in minutes. */
export const maxGraceMinutes = 7 * 24 * 60;

export const graceChoices: { minutes: number; label: string }[] = [
	{ minutes: 0, label: 'none (old key stops now)' },
	{ minutes: 15, label: '15 minutes' },
	{ minutes: 60, label: '1 hour' },
	{ minutes: 6 * 60, label: '6 hours' },
	{ minutes: 24 * 60, label: '1 day' },
	{ minutes: 3 * 24 * 60, label: '3 days' },
	{ minutes: maxGraceMinutes, label: '7 days' }
];

const graceMessage = `Grace period must be a whole number of minutes from 0 to ${maxGraceMinutes} (7 days)`;

export const graceField = z
	.union(
		[
			z.number({ error: graceMessage }),
			z.string({ error: graceMessage }).trim().regex(/^\d+$/, graceMessage).transform(Number)
		],
		{
			error: graceMessage
		}
	)
	.pipe(z.number().int(graceMessage).min(0, graceMessage).max(maxGraceMinutes, graceMessage));

/**
 * An optional future moment. Forms send `datetime-local` values without a zone; Skein shows times in UTC,
 * so such values are read as UTC too. Empty or null means "never expires".
 */
export const expiresField = z
	.union([z.string({ error: 'Expiry must be a date and time' }), z.null()], {
		error: 'Expiry must be a date and time'
	})
	.optional()
	.transform((value, ctx) => {
		const v = value?.trim();
		if (!v) return undefined;
		const zoned = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d+)?)?$/.test(v) ? `${v}Z` : v;
		const at = new Date(zoned);
		if (!/^\d{4}-\d{2}-\d{2}T/.test(v) || Number.isNaN(at.getTime())) {
			ctx.addIssue({
				code: 'custom',
				message: 'Expiry must be a date and time, e.g. 2030-01-31T18:00Z'
			});
			return z.NEVER;
		}
		if (at.getTime() <= Date.now()) {
			ctx.addIssue({ code: 'custom', message: 'Expiry must be in the future' });
			return z.NEVER;
		}
		return at;
	});

export const createRigSchema = z.object({
	name: rigNameField,
	description: rigDescriptionField.optional().default('')
});

export const rigDetailsSchema = z.object({
	name: rigNameField,
	description: rigDescriptionField.default('')
});

export const patchRigSchema = z
	.object({
		name: rigNameField.optional(),
		description: rigDescriptionField.optional(),
		archived: z.boolean({ error: 'archived must be true or false' }).optional()
	})
	.strict()
	.refine((v) => v.name !== undefined || v.description !== undefined || v.archived !== undefined, {
		message: 'Send name, description and/or archived'
	});

export const createKeySchema = z.object({
	label: keyLabelField.optional().default(''),
	expiresAt: expiresField
});

export const labelKeySchema = z.object({ label: keyLabelField });

export const rotateKeySchema = z.object({ grace_minutes: graceField });

export const uuidField = z
	.string()
	.regex(/^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i, 'Unknown id');
