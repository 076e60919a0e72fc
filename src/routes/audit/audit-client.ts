// The /audit page's one side effect: fetch a page of the trail from GET /api/audit.
import type { AuditPage } from '$lib/schemas/audit';

export type AuditFetch =
	| { ok: true; page: AuditPage }
	| { ok: false; status: number; message: string; issues: { path: string; message: string }[] };

export async function fetchAudit(query: string, signal?: AbortSignal): Promise<AuditFetch> {
	const res = await fetch(`/api/audit${query}`, { signal, headers: { accept: 'application/json' } });
	if (res.ok) return { ok: true, page: (await res.json()) as AuditPage };
	const body = (await res.json().catch(() => null)) as {
		message?: string;
		issues?: { path: string; message: string }[];
	} | null;
	return {
		ok: false,
		status: res.status,
		message: body?.message ?? `The audit trail could not be loaded (${res.status})`,
		issues: body?.issues ?? []
	};
}
