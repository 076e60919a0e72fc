// Comparing a job's snapshots: the picked set is checked (how many, which job) and read through the
// snapshot service's own read functions, oldest first so the first is the reference every change
// is measured against. The arithmetic itself is in $lib/compare (shared with the browser).
import { z } from 'zod';
import { MAX_COMPARE, parseSelection } from '$lib/compare';
import { DomainError } from './errors';
import type { Db } from './db/open';
import { getJob, jobExists } from './jobs';
import { getSnapshot, listSnapshots, type SnapshotDetail } from './snapshots';

/** The `s` query parameter: 1…MAX_COMPARE snapshot ids, comma-separated. */
export const compareQuerySchema = z.object({
	s: z
		.string({ error: 's is required: the snapshot ids to compare, e.g. s=12,15' })
		.max(200, 's is too long')
		.transform((raw, ctx) => {
			const ids = parseSelection(raw);
			if (ids === null) {
				ctx.addIssue({
					code: 'custom',
					message: 's must be snapshot ids separated by commas, e.g. s=12,15'
				});
				return z.NEVER;
			}
			return ids;
		})
		.refine((ids) => ids.length >= 1, 'pick at least one snapshot (s=ID,ID,…)')
		.refine((ids) => ids.length <= MAX_COMPARE, `at most ${MAX_COMPARE} snapshots can be compared at once`)
});

export interface Comparison {
	jobId: number;
	/** Oldest first: the first is the reference. */
	snapshots: SnapshotDetail[];
}

/**
 * The picked snapshots of one job, oldest first. 404 for no such job; 400 naming every id that is
 * not a snapshot of this job (another job's snapshots are never shown here).
 */
export function getComparison(db: Db, jobId: number, ids: readonly number[]): Comparison {
	if (!jobExists(db, jobId)) throw new DomainError('not-found', 'No such job');
	if (ids.length < 1 || ids.length > MAX_COMPARE)
		throw new DomainError('invalid', `Pick between 1 and ${MAX_COMPARE} snapshots to compare`, [
			{ path: 's', message: `${ids.length} picked; 1 to ${MAX_COMPARE} are allowed` }
		]);
	const found: SnapshotDetail[] = [];
	const missing: number[] = [];
	for (const id of ids) {
		const s = getSnapshot(db, id, jobId);
		if (s) found.push(s);
		else missing.push(id);
	}
	if (missing.length)
		throw new DomainError(
			'invalid',
			`${missing.length === 1 ? 'Snapshot' : 'Snapshots'} ${missing.join(', ')} ${missing.length === 1 ? 'is' : 'are'} not part of job ${jobId}; only this job’s snapshots can be compared`,
			missing.map((id) => ({ path: 's', message: `snapshot ${id} is not a snapshot of job ${jobId}` }))
		);
	found.sort((a, b) => a.createdAt.localeCompare(b.createdAt) || a.id - b.id);
	return { jobId, snapshots: found };
}

/** The job's snapshots (newest first, as listed on the job page), for the picker. */
export function listComparable(db: Db, jobId: number) {
	if (!jobExists(db, jobId)) throw new DomainError('not-found', 'No such job');
	return listSnapshots(db, jobId).map((s) => ({
		id: s.id,
		label: s.label,
		stage: s.stage,
		verdict: s.verdict,
		createdAt: s.createdAt,
		createdByName: s.createdByName
	}));
}

/** The few facts of a job a compare or snapshot page heads itself with. */
export function jobHeading(db: Db, jobId: number) {
	const job = getJob(db, jobId);
	if (!job) return null;
	return {
		id: job.id,
		make: job.make,
		model: job.model,
		status: job.status,
		customerName: job.customer.name
	};
}
