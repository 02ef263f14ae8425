/**
 * Writes to a run made inside another change's transaction (a pin keeps its run). Hand-written on the
 * transaction's postgres.js client: Drizzle's client cannot join that transaction.
 */
import type postgres from 'postgres';
import type { Run } from '$lib/api-types';

/** The run's device-time span, its row locked until the transaction ends; null when there is no such run. */
export async function lockRunSpan(
	tx: postgres.TransactionSql,
	runId: string
): Promise<Pick<Run, 'first_t' | 'last_t'> | null> {
	const [run] = await tx<Pick<Run, 'first_t' | 'last_t'>[]>`
		select first_t, last_t from runs where id = ${runId} for update`;
	return run ?? null;
}

/** Kept runs survive retention. */
export async function keepRun(tx: postgres.TransactionSql, runId: string): Promise<void> {
	await tx`update runs set kept = true where id = ${runId}`;
}
