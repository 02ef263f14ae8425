/**
 * Keeps open ingest connections honest about their feed keys: a LISTEN for revocations and expiry changes
 * on a connection of its own, set up again whenever that connection is lost (PostgreSQL restarted or
 * crashed), and a re-check of every key in use on a short period and right after each reconnect, for what
 * a lost notification would have said.
 */
import postgres from 'postgres';
import { withDeadline } from '../../src/lib/server/deadline';
import type { FeedKeyState } from '../../src/lib/server/rigs';

/**
 * Seconds between attempts to listen again: short, so the LISTEN is back within a fraction of a second of
 * PostgreSQL's return (a revocation in between is found by the re-check that follows); one connection only.
 */
function retryDelay(failures: number): number {
	return Math.min(0.025 * 2 ** failures, 0.25) * (0.5 + Math.random() / 2);
}

export interface KeyWatchOptions {
	url: string;
	revokedChannel: string;
	expiryChannel: string;
	/** how often the keys of open connections are read again; default 5 s */
	recheckMs?: number;
	/** the feed keys open connections stream with */
	keysInUse(): string[];
	/** reads the keys' states (missing keys count as revoked) */
	readStates(keyIds: string[]): Promise<Map<string, FeedKeyState>>;
	/** closes the key's connections; returns how many */
	stop(keyId: string, reason: string): number;
	/** the key expires at `expiresAt` (ms): its connections close then; returns how many */
	expire(keyId: string, expiresAt: number): number;
	log(level: 'info' | 'warn', msg: string, details?: Record<string, unknown>): void;
}

export class KeyWatch {
	#o: KeyWatchOptions;
	#sql: postgres.Sql;
	#listening = false;
	/** connection losses seen; a LISTEN that succeeded across one is done again */
	#losses = 0;
	#relisten: Promise<void> | null = null;
	#rechecking = false;
	#recheckAgain = false;
	#recheckFailing = false;
	#timer: ReturnType<typeof setInterval>;
	#closed = false;

	constructor(options: KeyWatchOptions) {
		this.#o = options;
		// `onnotify` is a postgres.js option its type declarations leave out
		const clientOptions = Object.assign(
			{
				max: 1,
				// no idle timeout by default; no lifetime, or the LISTEN would be dropped every half hour or so
				max_lifetime: null,
				fetch_types: false,
				connect_timeout: 5,
				backoff: retryDelay,
				onnotice: () => {},
				onclose: () => this.#lost()
			},
			{ onnotify: (channel: string, payload: string) => this.#notified(channel, payload) }
		);
		this.#sql = postgres(options.url, clientOptions);
		this.#timer = setInterval(() => void this.recheck(), options.recheckMs ?? 5000);
		this.#timer.unref();
		this.#listen();
	}

	/** True while revocations reach this process as they happen. */
	get listening(): boolean {
		return this.#listening;
	}

	/** Reads every key in use and closes the connections of those that stopped working. */
	async recheck(): Promise<void> {
		if (this.#closed) return;
		if (this.#rechecking) {
			// one asked for while another runs (maybe one that began before a reconnect) runs after it
			this.#recheckAgain = true;
			return;
		}
		const ids = this.#o.keysInUse();
		if (ids.length === 0) return;
		this.#rechecking = true;
		try {
			// a read that never answers must not stop the re-checks that follow
			const states = await withDeadline(this.#o.readStates(ids), 10_000, 'reading feed keys');
			for (const [keyId, state] of states) {
				if (state.stopped !== null) {
					const n = this.#o.stop(keyId, state.stopped);
					if (n) this.#o.log('info', 'feed key re-check: sockets closed', { keyId, closed: n });
				} else if (state.expiresAt !== null) this.#o.expire(keyId, state.expiresAt);
			}
			if (this.#recheckFailing) this.#o.log('info', 'feed key re-check works again');
			this.#recheckFailing = false;
		} catch (err) {
			if (!this.#recheckFailing) this.#o.log('warn', 'feed key re-check failed', { err });
			this.#recheckFailing = true;
		} finally {
			this.#rechecking = false;
		}
		if (this.#recheckAgain) {
			this.#recheckAgain = false;
			await this.recheck();
		}
	}

	async close(): Promise<void> {
		this.#closed = true;
		clearInterval(this.#timer);
		await this.#sql.end({ timeout: 1 });
	}

	#notified(channel: string, payload: string): void {
		if (channel === this.#o.revokedChannel) {
			const n = this.#o.stop(payload, 'feed key revoked');
			if (n) this.#o.log('info', 'feed key revoked: sockets closed', { keyId: payload, closed: n });
		} else if (channel === this.#o.expiryChannel) {
			const [keyId, at] = payload.split(' ');
			const expiresAt = Number(at);
			if (!keyId || !Number.isFinite(expiresAt)) return;
			const n = this.#o.expire(keyId, expiresAt);
			if (n)
				this.#o.log('info', 'feed key expiry set on open sockets', {
					keyId,
					connections: n,
					expiresAt
				});
		}
	}

	#lost(): void {
		this.#losses++;
		if (this.#listening)
			this.#o.log('warn', 'feed key revocations: connection lost, listening again');
		this.#listening = false;
		if (!this.#closed) this.#listen();
	}

	#listen(): void {
		if (this.#relisten === null) this.#relisten = this.#listenUntilItHolds();
	}

	/** LISTENs (again) until it holds; then re-checks the keys, since notifications may have been missed. */
	async #listenUntilItHolds(): Promise<void> {
		const quote = (name: string) => `"${name.replaceAll('"', '""')}"`;
		const statement = `listen ${quote(this.#o.revokedChannel)}; listen ${quote(this.#o.expiryChannel)}`;
		try {
			for (let attempt = 0; !this.#closed; attempt++) {
				const losses = this.#losses;
				try {
					await this.#sql.unsafe(statement);
				} catch {
					await new Promise((r) => setTimeout(r, retryDelay(attempt) * 1000));
					continue;
				}
				if (losses !== this.#losses) continue;
				this.#listening = true;
				if (attempt > 0) this.#o.log('info', 'feed key revocations: listening again');
				void this.recheck();
				return;
			}
		} finally {
			this.#relisten = null;
		}
	}
}
