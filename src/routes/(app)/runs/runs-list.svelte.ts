/** The Runs table's state: filters, sort and page, fetched from /api/runs whenever they change. */
import type { ApiErrorBody, RunList, RunListItem } from '$lib/api-types';
import type { RunSortKey } from '$lib/validation/runs';

export interface RunFilters {
	rig: string;
	status: string;
	tag: string;
	q: string;
	since: string;
	until: string;
}

export const PAGE_SIZE = 25;

export class RunsList {
	filters = $state<RunFilters>({ rig: '', status: '', tag: '', q: '', since: '', until: '' });
	sort = $state<RunSortKey>('started');
	dir = $state<'asc' | 'desc'>('desc');
	page = $state(0);
	rows = $state.raw<RunListItem[]>([]);
	total = $state(0);
	loading = $state(true);
	error = $state<string | null>(null);
	loaded = $state(false);

	readonly pages = $derived(Math.max(1, Math.ceil(this.total / PAGE_SIZE)));
	readonly filtered = $derived(Object.values(this.filters).some((v) => v !== ''));
	/** the query the current state asks for; a change triggers a fetch */
	readonly query = $derived.by(() => {
		const p = new URLSearchParams();
		for (const [k, v] of Object.entries(this.filters)) if (v.trim()) p.set(k, v.trim());
		p.set('sort', this.sort);
		p.set('dir', this.dir);
		p.set('limit', String(PAGE_SIZE));
		p.set('offset', String(this.page * PAGE_SIZE));
		return p.toString();
	});

	#abort: AbortController | null = null;

	async fetch(query: string) {
		this.#abort?.abort();
		const abort = (this.#abort = new AbortController());
		this.loading = true;
		try {
			const res = await fetch(`/api/runs?${query}`, {
				signal: abort.signal,
				headers: { accept: 'application/json' }
			});
			const body = (await res.json()) as Partial<RunList> & Partial<ApiErrorBody>;
			if (!res.ok) {
				this.error = body.error?.details
					? Object.values(body.error.details).join('; ')
					: (body.error?.message ?? `HTTP ${res.status}`);
				this.rows = [];
				this.total = 0;
			} else {
				this.error = null;
				this.rows = body.runs ?? [];
				this.total = body.total ?? 0;
			}
			this.loaded = true;
		} catch (err) {
			if ((err as Error).name !== 'AbortError') this.error = 'Could not reach the server';
		} finally {
			if (this.#abort === abort) this.loading = false;
		}
	}

	sortBy(key: RunSortKey) {
		if (this.sort === key) this.dir = this.dir === 'asc' ? 'desc' : 'asc';
		else {
			this.sort = key;
			this.dir = key === 'name' || key === 'rig' ? 'asc' : 'desc';
		}
		this.page = 0;
	}

	setFilter<K extends keyof RunFilters>(key: K, value: string) {
		this.filters[key] = value;
		this.page = 0;
	}

	destroy() {
		this.#abort?.abort();
	}
}
