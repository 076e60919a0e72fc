// What a sign-off covers, as one plain object, and its fingerprint: SHA-256 over the RFC 8785
// canonical JSON (the `canonicalize` package), so the same facts always give the same hash
// whatever order keys were written in, and any changed figure, audio hash or reading count
// gives another. Pure apart from node:crypto; the tests run it directly.
import { createHash } from 'node:crypto';
import canonicalize from 'canonicalize';

export interface CoveredSnapshot {
	id: number;
	stage: string;
	label: string;
	verdict: string;
	/** The server's analysis results as stored (every figure with its conditions). */
	results: unknown;
	checks: unknown;
	/** SHA-256 of the captured WAV, or null when the audio row is missing. */
	audioSha256: string | null;
	createdBy: string;
	createdAt: string;
}

export interface CoveredSoakRun {
	id: number;
	status: string;
	preset: string;
	timeScale: number;
	frequencyHz: number;
	loadOhms: number;
	drivePowerW: number;
	durationS: number;
	startedAt: string;
	endedAt: string | null;
	abortReason: string | null;
	summary: unknown;
	readingCount: number;
}

export interface CoveredPart {
	id: number;
	refDes: string;
	description: string;
	value: string | null;
	quantity: number;
	unitCostCents: number;
	supplier: string | null;
	state: string;
	verificationNote: string | null;
}

export interface CoveredRecord {
	/** Version of this shape, so a later change to what is covered can still verify old records. */
	version: 1;
	jobId: number;
	snapshots: CoveredSnapshot[];
	soakRuns: CoveredSoakRun[];
	parts: CoveredPart[];
	/**
	 * The bench worksheets (intake, power-up, bias, safety) as saved. Present only when the job has
	 * any, so a record signed before worksheets existed hashes exactly as it did.
	 */
	worksheets?: CoveredWorksheet[];
}

export interface CoveredWorksheet {
	kind: string;
	version: number;
	data: unknown;
}

/** RFC 8785 canonical JSON of `value`. Throws on values JSON cannot carry (NaN, functions). */
export function canonicalJson(value: unknown): string {
	const text = canonicalize(value);
	if (text === undefined) throw new Error('Nothing to canonicalize');
	return text;
}

export function sha256Hex(text: string): string {
	return createHash('sha256').update(text, 'utf8').digest('hex');
}

/** The canonical text and its SHA-256, as stored on the sign-off. */
export function fingerprint(record: CoveredRecord): { covered: string; sha256: string } {
	const covered = canonicalJson(record);
	return { covered, sha256: sha256Hex(covered) };
}

/**
 * What differs between the record as signed and as it is now, in words a supervisor reads:
 * "snapshot #12 changed", "part #4 (C12) was added", "soak run #3 is no longer there".
 */
export function describeDifferences(signed: CoveredRecord, now: CoveredRecord): string[] {
	const out: string[] = [];
	const sections: [string, keyof Pick<CoveredRecord, 'snapshots' | 'soakRuns' | 'parts'>][] = [
		['snapshot', 'snapshots'],
		['soak run', 'soakRuns'],
		['part', 'parts']
	];
	for (const [noun, key] of sections) {
		const before = new Map((signed[key] ?? []).map((x) => [x.id, x] as const));
		const after = new Map((now[key] ?? []).map((x) => [x.id, x] as const));
		const name = (x: { id: number; refDes?: string }) =>
			`${noun} #${x.id}${x.refDes ? ` (${x.refDes})` : ''}`;
		for (const [id, was] of before) {
			const is = after.get(id);
			if (!is) out.push(`${name(was)} is no longer there`);
			else if (canonicalJson(was) !== canonicalJson(is)) {
				const fields = Object.keys({ ...was, ...is }).filter(
					(f) =>
						canonicalJson((was as unknown as Record<string, unknown>)[f] ?? null) !==
						canonicalJson((is as unknown as Record<string, unknown>)[f] ?? null)
				);
				out.push(`${name(is)} changed (${fields.join(', ')})`);
			}
		}
		for (const [id, is] of after) if (!before.has(id)) out.push(`${name(is)} was added`);
	}
	const sheets = (r: CoveredRecord) => new Map((r.worksheets ?? []).map((w) => [w.kind, w] as const));
	const [wasSheets, isSheets] = [sheets(signed), sheets(now)];
	for (const kind of new Set([...wasSheets.keys(), ...isSheets.keys()])) {
		const was = wasSheets.get(kind);
		const is = isSheets.get(kind);
		if (!is) out.push(`the ${kind} worksheet is no longer there`);
		else if (!was) out.push(`the ${kind} worksheet was added`);
		else if (canonicalJson(was) !== canonicalJson(is))
			out.push(`the ${kind} worksheet changed (version ${was.version} → ${is.version})`);
	}
	if (signed.jobId !== now.jobId) out.push('the record belongs to another job');
	return out;
}
