// The compare page's fetches: the picked snapshots in full, and the job's soak runs. Errors carry
// the server's own message so the page can show what was refused and why.
import type { ComparableSnapshot } from '$lib/compare';
import type { SoakRunListItem } from '$lib/soak/types';

export interface CompareSnapshot extends ComparableSnapshot {
	jobId: number;
	stage: string;
	createdAt: string;
	createdByName: string;
	verdict: 'pass' | 'fail' | 'none';
	sampleRateHz: number;
	spectrum?: {
		fftSize?: number;
		window?: string;
		channels?: { frequencyHz: number[]; levelDbv: number[] }[];
	};
}

async function getJson<T>(url: string, signal?: AbortSignal): Promise<T> {
	const res = await fetch(url, { signal, headers: { accept: 'application/json' } });
	const body = (await res.json().catch(() => ({}))) as T & { message?: string };
	if (!res.ok) throw new Error(body.message ?? `The server answered ${res.status}`);
	return body;
}

/** The picked snapshots, oldest first (the first is the reference). */
export async function fetchComparison(
	jobId: number,
	ids: readonly number[],
	signal?: AbortSignal
): Promise<CompareSnapshot[]> {
	const body = await getJson<{ snapshots: CompareSnapshot[] }>(
		`/api/jobs/${jobId}/compare?s=${ids.join(',')}`,
		signal
	);
	return body.snapshots;
}

export async function fetchSoakRuns(jobId: number, signal?: AbortSignal): Promise<SoakRunListItem[]> {
	return (await getJson<{ runs: SoakRunListItem[] }>(`/api/jobs/${jobId}/soak-runs`, signal)).runs;
}
