// Saving a worksheet from the page: PUT the whole sheet with the version it was edited from.
// Answers the new version, or the server's refusal in words (409 stale, 400 with each problem).
import type { WorksheetKind } from '$lib/schemas/worksheets';

export type SaveResult =
	| { ok: true; version: number; updatedAt: string | null }
	| { ok: false; status: number; message: string; issues: { path: string; message: string }[] };

export async function saveSheet(
	jobId: number,
	kind: WorksheetKind,
	version: number,
	data: unknown
): Promise<SaveResult> {
	let res: Response;
	try {
		res = await fetch(`/api/jobs/${jobId}/worksheets/${kind}`, {
			method: 'PUT',
			headers: { 'content-type': 'application/json' },
			body: JSON.stringify({ version, data })
		});
	} catch {
		return {
			ok: false,
			status: 0,
			message: 'Could not reach the server: nothing was saved; try again',
			issues: []
		};
	}
	const body = (await res.json().catch(() => ({}))) as {
		version?: number;
		updatedAt?: string | null;
		message?: string;
		issues?: { path: string; message: string }[];
	};
	if (res.ok) return { ok: true, version: body.version ?? version + 1, updatedAt: body.updatedAt ?? null };
	return {
		ok: false,
		status: res.status,
		message: body.message ?? `The server refused the sheet (${res.status})`,
		issues: body.issues ?? []
	};
}

/** A number input's value as the sheet stores it: empty or not a number → null. */
export function num(v: unknown): number | null {
	if (typeof v === 'number') return Number.isFinite(v) ? v : null;
	if (typeof v === 'string' && v.trim() !== '') {
		const n = Number(v.trim().replace(',', '.'));
		return Number.isFinite(n) ? n : null;
	}
	return null;
}
