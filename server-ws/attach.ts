import type { Server } from 'node:http';
import { sqlClient } from '../src/lib/server/db';
import { PostgresIngestStore } from '../src/lib/server/ingest/store';
import { applyRetention, createPartitionsAhead } from '../src/lib/server/ingest/partitions';
import { logger } from '../src/lib/server/log';
import { startMetricJobs, stopMetricJobs } from '../src/lib/server/metrics/jobs';
import { keyExpiryChannel, keyRevokedChannel } from '../src/lib/server/rigs';
import { interruptAbandonedRuns } from '../src/lib/server/runs/streamed';
import { closeSocketsForKey, createIngestEndpoint, setKeyExpiry } from './ingest/endpoint';
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

	const listening = sql.listen(keyRevokedChannel, (keyId) => {
		const n = closeSocketsForKey(keyId);
		if (n) logger.info({ keyId, closed: n }, 'feed key revoked: sockets closed');
	});
	const listeningExpiry = sql.listen(keyExpiryChannel, (payload) => {
		const [keyId, at] = payload.split(' ');
		const expiresAt = Number(at);
		if (!keyId || !Number.isFinite(expiresAt)) return;
		const n = setKeyExpiry(keyId, expiresAt);
		if (n) logger.info({ keyId, connections: n, expiresAt }, 'feed key expiry set on open sockets');
	});

	const graceMs = Number(process.env.INGEST_GRACE_SECONDS ?? 30) * 1000;
	// runs left live by a previous process (crash, restart) become interrupted once their grace has passed
	const sweep = () => interruptAbandonedRuns(graceMs, [...ingest.runs.keys()]);
	const maintain = async () => {
		await createPartitionsAhead(sql);
		const days = Number(process.env.RETENTION_DAYS ?? 0);
		if (days > 0) await applyRetention(sql, days);
	};
	const timers = [
		setTimeout(
			() => void sweep().catch((err) => logger.error({ err }, 'run sweep failed')),
			graceMs + 1000
		),
		setInterval(
			() => void maintain().catch((err) => logger.error({ err }, 'maintenance failed')),
			hourMs
		)
	];
	for (const t of timers) t.unref();
	void maintain().catch((err) => logger.error({ err }, 'maintenance failed'));
	void startMetricJobs(process.env.DATABASE_URL).catch((err) =>
		logger.error({ err }, 'metric jobs failed to start')
	);

	return {
		async close() {
			for (const t of timers) clearTimeout(t);
			await live.close();
			await ingest.close();
			await stopMetricJobs();
			await (await listening).unlisten();
			await (await listeningExpiry).unlisten();
		}
	};
}
