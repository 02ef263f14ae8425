/**
 * `npm run cli -- <group> <command> [--flags]`: bootstrapping and automation without the web UI.
 * Exit codes: 0 done, 1 refused by the data (e.g. unknown person), 2 bad arguments.
 */
import { parseArgs } from 'node:util';
import { z } from 'zod';
import {
	addPersonSchema,
	emailField,
	fieldErrors,
	roleField,
	tokenNameSchema
} from '../src/lib/validation/people';
import { systemActor, type Actor } from '../src/lib/server/auth/audit';
import { closeDb } from '../src/lib/server/db';
import {
	createApiToken,
	createUser,
	findUserByEmail,
	listPeople,
	PeopleError,
	setRole
} from '../src/lib/server/people';
import { expiresField, keyLabelField, rigNameField, uuidField } from '../src/lib/validation/rigs';
import {
	createFeedKey,
	createRig,
	findFeedKeysByPrefix,
	findRigByName,
	getFeedKey,
	listAllFeedKeys,
	revokeFeedKey,
	RigsError
} from '../src/lib/server/rigs';
import { demoCluster, startCluster, ensureDatabase } from './lib/pg';
import { applyMigrations } from '../src/lib/server/db/migrate';
import { parseSimulateArgs, simulate, SimulateUsageError } from './sim/command';

class UsageError extends Error {}

const usage = `usage: npm run cli -- <command>
  people add --email E --role R [--name N] [--password P]
  people list
  people set-role --email E --role R
  tokens create --email E --name N     (prints the new token alone on the last line)
  keys create --rig NAME [--label L] [--expires ISO]
                                       (makes the rig if it is new; prints the feed key alone on the last line)
  keys list [--rig NAME]               (rig, key id, prefix, label, status, last used; tab-separated)
  keys revoke --id KEYID | --prefix P
  simulate --rig NAME --scenario NAME [--speed 1] [--duration S] [--seed N] [--url ws://…] [--key K] [--loop]
                                       (streams a simulated rig to a running Skein; Ctrl-C closes the run)
                                       scenarios: lanternfall-crossing, glassmere-reach, brassnettle-yard`;

const cliActor: Actor = { ...systemActor, label: 'cli' };

function flags(args: string[], spec: Record<string, { required?: boolean }>) {
	let parsed;
	try {
		parsed = parseArgs({
			args,
			options: Object.fromEntries(Object.keys(spec).map((k) => [k, { type: 'string' as const }])),
			strict: true,
			allowPositionals: false
		});
	} catch (err) {
		throw new UsageError(err instanceof Error ? err.message : String(err));
	}
	const values = parsed.values as Record<string, string | undefined>;
	for (const [k, s] of Object.entries(spec)) {
		if (s.required && !values[k]) throw new UsageError(`--${k} is required`);
	}
	return values;
}

function check<S extends z.ZodType>(schema: S, input: unknown): z.infer<S> {
	const r = schema.safeParse(input);
	if (!r.success) {
		throw new UsageError(
			Object.entries(fieldErrors(r.error))
				.map(([k, v]) => `--${k}: ${v}`)
				.join('\n')
		);
	}
	return r.data;
}

async function simulateCommand(args: string[]): Promise<void> {
	let values;
	try {
		values = parseArgs({
			args,
			options: {
				rig: { type: 'string' },
				scenario: { type: 'string' },
				speed: { type: 'string' },
				duration: { type: 'string' },
				seed: { type: 'string' },
				url: { type: 'string' },
				key: { type: 'string' },
				loop: { type: 'boolean' }
			},
			strict: true,
			allowPositionals: false
		}).values;
	} catch (err) {
		throw new UsageError(err instanceof Error ? err.message : String(err));
	}
	let parsed;
	try {
		parsed = parseSimulateArgs(values);
	} catch (err) {
		if (err instanceof SimulateUsageError) throw new UsageError(err.message);
		throw err;
	}
	const stop = new AbortController();
	const onSignal = () => {
		console.log('stopping: closing the run…');
		stop.abort();
	};
	process.once('SIGINT', onSignal);
	process.once('SIGTERM', onSignal);
	await simulate(parsed, stop.signal, (line) => console.log(line));
}

async function run(argv: string[]): Promise<void> {
	if (argv[0] === 'simulate') return simulateCommand(argv.slice(1));
	const [group, command, ...rest] = argv;
	const key = `${group ?? ''} ${command ?? ''}`.trim();
	switch (key) {
		case 'people add': {
			const v = check(
				addPersonSchema,
				flags(rest, { email: { required: true }, role: { required: true }, name: {}, password: {} })
			);
			const user = await createUser(cliActor, v);
			console.log(
				`added ${user.email} as ${user.role}${v.password ? '' : ' (no password yet: send a reset link or set one with --password)'}`
			);
			return;
		}
		case 'people list': {
			flags(rest, {});
			for (const p of await listPeople())
				console.log(`${p.email}\t${p.role}\t${p.active ? 'active' : 'deactivated'}\t${p.name}`);
			return;
		}
		case 'people set-role': {
			const v = check(
				z.object({ email: emailField, role: roleField }),
				flags(rest, { email: { required: true }, role: { required: true } })
			);
			const user = await findUserByEmail(v.email);
			if (!user) throw new PeopleError('not_found', `no person with e-mail ${v.email}`);
			await setRole(cliActor, user.id, v.role);
			console.log(`${user.email} is now ${v.role}`);
			return;
		}
		case 'tokens create': {
			const v = check(
				z.object({ email: emailField }).and(tokenNameSchema),
				flags(rest, { email: { required: true }, name: { required: true } })
			);
			const user = await findUserByEmail(v.email);
			if (!user) throw new PeopleError('not_found', `no person with e-mail ${v.email}`);
			if (!user.active) throw new PeopleError('invalid', `${v.email} is deactivated`);
			const t = await createApiToken(
				{ ...cliActor, label: `cli for ${user.email}` },
				user.id,
				v.name
			);
			console.log(`token "${v.name}" for ${user.email} (shown once):`);
			console.log(t.token);
			return;
		}
		case 'keys create': {
			const f = flags(rest, { rig: { required: true }, label: {}, expires: {} });
			const v = check(
				z.object({ rig: rigNameField, label: keyLabelField.optional(), expires: expiresField }),
				f
			);
			const rig = (await findRigByName(v.rig)) ?? (await createRig(cliActor, { name: v.rig }));
			const made = await createFeedKey(cliActor, rig.id, { label: v.label, expiresAt: v.expires });
			console.log(
				`feed key ${made.key.id} for rig "${rig.name}"${v.expires ? `, expires ${v.expires.toISOString()}` : ''} (shown once):`
			);
			console.log(made.secret);
			return;
		}
		case 'keys list': {
			const f = flags(rest, { rig: {} });
			const rigName =
				f.rig === undefined
					? undefined
					: check(z.object({ rig: rigNameField }), { rig: f.rig }).rig;
			if (rigName !== undefined && !(await findRigByName(rigName)))
				throw new RigsError('not_found', `no rig named "${rigName}"`);
			for (const k of await listAllFeedKeys(rigName)) {
				const status =
					k.rigArchivedAt && (k.status === 'active' || k.status === 'expiring')
						? `${k.status} (rig archived)`
						: k.status;
				console.log(
					[k.rigName, k.id, k.prefix, k.label, status, k.lastUsedAt?.toISOString() ?? 'never'].join(
						'\t'
					)
				);
			}
			return;
		}
		case 'keys revoke': {
			const f = flags(rest, { id: {}, prefix: {} });
			if ((f.id === undefined) === (f.prefix === undefined))
				throw new UsageError('give exactly one of --id or --prefix');
			let keyId: string;
			if (f.id !== undefined) {
				keyId = check(z.object({ id: uuidField }), { id: f.id }).id;
				if (!(await getFeedKey(keyId)))
					throw new RigsError('not_found', `no feed key with id ${keyId}`);
			} else {
				const found = await findFeedKeysByPrefix(f.prefix!.replace(/(…|\.\.\.)$/, ''));
				if (found.length === 0)
					throw new RigsError('not_found', `no feed key starts with ${f.prefix}`);
				if (found.length > 1)
					throw new RigsError(
						'conflict',
						`${found.length} feed keys start with ${f.prefix}; use --id`
					);
				keyId = found[0].id;
			}
			const revoked = await revokeFeedKey(cliActor, keyId);
			console.log(`revoked feed key ${revoked.id} (${revoked.prefix}…)`);
			return;
		}
		default:
			throw new UsageError(key ? `unknown command "${key}"` : 'no command given');
	}
}

async function main() {
	const argv = process.argv.slice(2);
	if (argv.length === 0 || argv[0] === '--help' || argv[0] === 'help') {
		console.log(usage);
		process.exit(argv.length === 0 ? 2 : 0);
	}
	try {
		if (!process.env.DATABASE_URL) {
			process.env.DATABASE_URL = startCluster(demoCluster);
			await ensureDatabase(process.env.DATABASE_URL);
			await applyMigrations(process.env.DATABASE_URL);
		}
		await run(argv);
		await closeDb();
	} catch (err) {
		await closeDb().catch(() => {});
		if (err instanceof UsageError) {
			console.error(`error: ${err.message}\n\n${usage}`);
			process.exit(2);
		}
		if (err instanceof PeopleError || err instanceof RigsError) {
			console.error(`error: ${err.message}`);
			process.exit(1);
		}
		throw err;
	}
}

await main();
