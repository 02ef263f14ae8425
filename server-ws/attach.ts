import type { Server } from 'node:http';
import { databaseUrl, pingDatabase, sqlClient } from '../src/lib/server/db';
import { registerProbe } from '../src/lib/server/health';
import { PostgresIngestStore } from '../src/lib/server/ingest/store';
import { applyRetention, createPartitionsAhead } from '../src/lib/server/ingest/partitions';
import { logger } from '../src/lib/server/log';
import { startMetricJobs, stopMetricJobs } from '../src/lib/server/metrics/jobs';
import { feedKeyStates, keyExpiryChannel, keyRevokedChannel } from '../src/lib/server/rigs';
import { interruptAbandonedRuns } from '../src/lib/server/runs/streamed';
import {
	closeSocketsForKey,
	createIngestEndpoint,
	keyIdsInUse,
	setKeyExpiry
} from './ingest/endpoint';
import { KeyWatch } from './ingest/key-watch';
import { postgresLiveDirectory } from './live/directory';
import { createLiveEndpoint } from './live/endpoint';
import { dispatchUpgrades } from './upgrade';

export interface AttachedSockets {
	close(): Promise<void>;
}

const hourMs = 3_600_000;

function positiveInteger(name: string, fallback: number): number {
	const raw = process.env[name];
	if (raw === undefined || raw === '') return fallback;
	const n = Number(raw);
	if (!Number.isInteger(n) || n < 1)
		throw new Error(`${name} must be a whole number of at least 1, got "${raw}"`);
	return n;
}

/** Attaches Skein's socket endpoints (ingest, live viewers) to an HTTP server. */
export function attachSockets(server: Server): AttachedSockets {
	const sql = sqlClient();
	const ingest = createIngestEndpoint({
		store: new PostgresIngestStore(sql),
		limits: {
			maxMessageBytes: Number(process.env.INGEST_MAX_MESSAGE_BYTES ?? 1024 * 1024)
		},
		timing: {
			graceMs: Number(process.env.INGEST_GRACE_SECONDS ?? 30) * 1000
		},
		maxConnectionsPerKey: positiveInteger('INGEST_MAX_CONNECTIONS_PER_KEY', 4),
		onError: (err, context) => logger.error({ err, context }, 'ingest error')
	});

	const live = createLiveEndpoint({
		directory: postgresLiveDirectory,
		onError: (err, context) => logger.error({ err, context }, 'live viewer error')
	});

	dispatchUpgrades(
		server,
		[(...a) => ingest.handleUpgrade(...a), (...a) => live.handleUpgrade(...a)],
		(err, context) => logger.error({ err, context }, 'socket upgrade error')
	);

	const keys = new KeyWatch({
		url: databaseUrl(),
		revokedChannel: keyRevokedChannel,
		expiryChannel: keyExpiryChannel,
		recheckMs: Number(process.env.FEED_KEY_RECHECK_SECONDS ?? 5) * 1000,
		keysInUse: keyIdsInUse,
		readStates: feedKeyStates,
		stop: (keyId) => closeSocketsForKey(keyId),
		expire: setKeyExpiry,
		log: (level, msg, details) => logger[level](details ?? {}, msg)
	});

	// what the upgrades of this process wait on: its own pools (key checks, sessions, storage)
	const probes = [
		registerProbe('ingest', async () => {
			await pingDatabase();
			return keys.listening ? null : 'feed key revocations are not being received (reconnecting)';
		}),
		registerProbe('live', async () => {
			await pingDatabase();
			return null;
		})
	];

	const graceMs = Number(process.env.INGEST_GRACE_SECONDS ?? 30) * 1000;
	// runs left live by a previous process (crash, restart) become interrupted once their grace has passed
	const sweep = () => interruptAbandonedRuns(graceMs, [...ingest.runs.keys()]);
	const maintain = async () => {
		await createPartitionsAhead(sql);
		const days = Number(process.env.RETENTION_DAYS ?? 0);
		if (days > 0) await applyRetention(sql, days);
	};
	// the database may be down when these first run (the process started before it): each is tried again
	// every 5 s until it has worked once
	let closing = false;
	const timers: ReturnType<typeof setTimeout>[] = [];
	const once = (what: string, task: () => Promise<void>) => {
		void task().catch((err: unknown) => {
			logger.error({ err }, `${what} failed; trying again in 5 s`);
			if (!closing) timers.push(setTimeout(() => once(what, task), 5000).unref());
		});
	};
	timers.push(
		setTimeout(() => once('run sweep', sweep), graceMs + 1000).unref(),
		setInterval(
			() => void maintain().catch((err) => logger.error({ err }, 'maintenance failed')),
			hourMs
		).unref()
	);
	once('maintenance', maintain);
	once('starting the metric jobs', () => startMetricJobs(process.env.DATABASE_URL));

	return {
		async close() {
			closing = true;
			for (const t of timers) clearTimeout(t);
			await live.close();
			await ingest.close();
			for (const remove of probes) remove();
			await stopMetricJobs();
			await keys.close();
		}
	};
}
