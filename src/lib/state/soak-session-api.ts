// The soak API as the browser calls it: one small module for every request the soak page makes,
// so the session holds state and rules, not URLs and status codes.
import type { SoakRunDetail } from '$lib/soak/types';

export async function postJson(url: string, body: unknown): Promise<Response> {
	return fetch(url, {
		method: 'POST',
		headers: { 'content-type': 'application/json', accept: 'application/json' },
		body: JSON.stringify(body ?? {})
	});
}

/** The `message` of an error answer, or the status when there is none. */
export async function messageOf(res: Response): Promise<string> {
	try {
		const j = (await res.json()) as { message?: string };
		return j.message ?? `HTTP ${res.status}`;
	} catch {
		return `HTTP ${res.status}`;
	}
}

export type Answer<T> = { ok: true; value: T } | { ok: false; message: string; status: number | null };

async function answer<T>(res: Response | null, what: string): Promise<Answer<T>> {
	if (!res) return { ok: false, message: `The server did not answer; ${what}`, status: null };
	if (!res.ok) return { ok: false, message: await messageOf(res), status: res.status };
	return { ok: true, value: (await res.json()) as T };
}

/** Start a run on a job (the body is the soak schema's `createRunSchema`). */
export async function createRun(jobId: number, body: unknown): Promise<Answer<{ id: number }>> {
	const res = await postJson(`/api/jobs/${jobId}/soak-runs`, body).catch(() => null);
	return answer(res, 'nothing was started');
}

export async function fetchDetail(runId: number): Promise<Answer<SoakRunDetail>> {
	const res = await fetch(`/api/soak-runs/${runId}`, {
		headers: { accept: 'application/json' },
		cache: 'no-store'
	}).catch(() => null);
	return answer(res, 'try again');
}

export interface ReadingsPage<R> {
	readings: R[];
	lastSeq: number | null;
	more: boolean;
}

export async function fetchReadings<R>(
	runId: number,
	afterSeq: number,
	limit = 20_000
): Promise<ReadingsPage<R> | null> {
	const res = await fetch(`/api/soak-runs/${runId}/readings?after=${afterSeq}&limit=${limit}`, {
		cache: 'no-store'
	}).catch(() => null);
	if (!res || !res.ok) return null;
	return (await res.json()) as ReadingsPage<R>;
}

/** The newest `count` readings of a run, in seq order. */
export async function fetchReadingsTail<R>(runId: number, count: number): Promise<ReadingsPage<R> | null> {
	const res = await fetch(`/api/soak-runs/${runId}/readings?tail=${count}`, { cache: 'no-store' }).catch(
		() => null
	);
	if (!res || !res.ok) return null;
	return (await res.json()) as ReadingsPage<R>;
}

/** Raw answers: the outbox decides per status what is settled and what is retried. */
export function postReadings(runId: number, readings: unknown[]): Promise<Response | null> {
	return postJson(`/api/soak-runs/${runId}/readings`, { readings }).catch(() => null);
}
export function postEvents(runId: number, events: unknown[]): Promise<Response | null> {
	return postJson(`/api/soak-runs/${runId}/events`, { events }).catch(() => null);
}
export function postEnd(runId: number, kind: 'finish' | 'abort', body: unknown): Promise<Response | null> {
	return postJson(`/api/soak-runs/${runId}/${kind}`, body).catch(() => null);
}
