// The job service against an in-memory database with the real migrations: intake and
// customer reuse, list search/filter/sort/pages, detail with totals, status transitions
// (roles, history in the same transaction), work log and parts, validation errors, and the
// sign-off lock with its reopening.
import { beforeEach, describe, expect, it } from 'vitest';
import { isDomainError } from './errors';
import { eq } from 'drizzle-orm';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import {
	JOB_LOCKED_MESSAGE,
	addLogEntry,
	addPart,
	assertJobOpen,
	changeStatus,
	createJob,
	deletePart,
	getJob,
	listJobs,
	recordStatusChange,
	SIGN_OFF_IS_THE_WAY,
	reopenJob,
	statusMoves,
	updateJob,
	updatePart,
	type Actor
} from './jobs';
import {
	allowedNextStatuses,
	jobListQuerySchema,
	nextStatuses,
	partSchema,
	type JobIntake
} from '../schemas/jobs';
import { JOB_STATUSES, type Role } from '../schemas/enums';

/** The HTTP status a service call fails with (its DomainError), or 'ok'. */
function statusOf(fn: () => unknown): number | 'ok' {
	try {
		fn();
		return 'ok';
	} catch (e) {
		if (isDomainError(e)) return e.status;
		throw e;
	}
}

function issuesOf(fn: () => unknown): { path: string; message: string }[] {
	try {
		fn();
	} catch (e) {
		if (isDomainError(e) && e.status === 400) return e.issues ?? [];
		throw e;
	}
	throw new Error('expected a 400');
}

function addUser(db: Db, id: string, name: string, role: Role, active = true) {
	db.insert(table.users)
		.values({ id, email: `${id}@example.com`, name, role, active, passwordHash: 'unused-in-these-tests' })
		.run();
}

const TECH: Actor = { id: 'tech', role: 'technician' };
const SUP: Actor = { id: 'sup', role: 'supervisor' };
const ADMIN: Actor = { id: 'adm', role: 'admin' };

const intake = (over: Partial<JobIntake> = {}): JobIntake => ({
	customerName: 'Greta Fallowmere',
	customerEmail: 'greta@example.net',
	customerPhone: '',
	category: 'receiver',
	make: 'Corvane',
	model: 'CR-7400',
	serial: 'C74-1',
	year: 1977,
	complaint: 'Hum in the left channel',
	ratedPowerW: 60,
	ratedLoadOhms: 8,
	technicianId: '',
	promisedDate: '',
	...over
});

let db: Db;
beforeEach(() => {
	db = openDb(':memory:');
	addUser(db, 'tech', 'Tamsin Oakridge', 'technician');
	addUser(db, 'tech2', 'Niko Brambleton', 'technician');
	addUser(db, 'sup', 'Rowan Thistlewood', 'supervisor');
	addUser(db, 'adm', 'Ada Quennell', 'admin');
	addUser(db, 'gone', 'Former Staff', 'technician', false);
});

describe('status transition rules', () => {
	it('follows the working path with skips and step-backs, and reaches hold/declined from anywhere open', () => {
		expect(nextStatuses('received')).toEqual(['diagnosing', 'awaiting-approval', 'on-hold', 'declined']);
		expect(nextStatuses('diagnosing')).toEqual([
			'awaiting-approval',
			'awaiting-parts',
			'repairing',
			'on-hold',
			'declined'
		]);
		expect(nextStatuses('awaiting-approval')).toEqual(['diagnosing', 'repairing', 'on-hold', 'declined']);
		expect(nextStatuses('awaiting-parts')).toEqual(['awaiting-approval', 'repairing', 'on-hold', 'declined']);
		expect(nextStatuses('repairing')).toEqual([
			'awaiting-approval',
			'awaiting-parts',
			'testing',
			'on-hold',
			'declined'
		]);
		expect(nextStatuses('testing')).toEqual([
			'awaiting-approval',
			'repairing',
			'awaiting-review',
			'on-hold',
			'declined'
		]);
		expect(nextStatuses('awaiting-review')).toEqual([
			'repairing',
			'testing',
			'approved',
			'on-hold',
			'declined'
		]);
		expect(nextStatuses('approved')).toEqual(['returned', 'on-hold', 'declined']);
		expect(nextStatuses('returned')).toEqual([]);
		expect(nextStatuses('on-hold')).toEqual([
			'received',
			'diagnosing',
			'awaiting-approval',
			'awaiting-parts',
			'repairing',
			'testing',
			'awaiting-review',
			'declined'
		]);
		expect(nextStatuses('declined')).toEqual(['returned', 'on-hold']);
	});

	it('never offers a move to the same status', () => {
		for (const s of JOB_STATUSES) expect(nextStatuses(s)).not.toContain(s);
	});

	it('leaves waiting for the customer to the estimate and the customer: the status form never offers it', () => {
		for (const role of ['technician', 'supervisor', 'admin'] as const) {
			expect(allowedNextStatuses('diagnosing', role)).not.toContain('awaiting-approval');
			expect(allowedNextStatuses('awaiting-approval', role)).toEqual(['diagnosing', 'on-hold', 'declined']);
		}
	});

	it('offers approval to supervisors and admins only', () => {
		expect(allowedNextStatuses('awaiting-review', 'technician')).not.toContain('approved');
		expect(allowedNextStatuses('awaiting-review', 'supervisor')).toContain('approved');
		expect(allowedNextStatuses('awaiting-review', 'admin')).toContain('approved');
		for (const s of JOB_STATUSES) expect(allowedNextStatuses(s, 'technician')).not.toContain('approved');
	});
});

describe('intake', () => {
	it('creates the job as received with its first history row', () => {
		const job = createJob(db, intake({ technicianId: 'tech', promisedDate: '2026-04-01' }), 'sup');
		expect(job.status).toBe('received');
		expect(job.customer).toMatchObject({ name: 'Greta Fallowmere', email: 'greta@example.net', phone: null });
		expect(job.technician).toEqual({ id: 'tech', name: 'Tamsin Oakridge' });
		expect(job.promisedDate).toBe('2026-04-01');
		expect(job.history).toHaveLength(1);
		expect(job.history[0]).toMatchObject({
			fromStatus: null,
			toStatus: 'received',
			userId: 'sup',
			userName: 'Rowan Thistlewood'
		});
	});

	it('stores empty optional fields as null', () => {
		const job = createJob(
			db,
			intake({ serial: '', customerEmail: '', year: null, ratedPowerW: null }),
			'tech'
		);
		expect(job.serial).toBeNull();
		expect(job.year).toBeNull();
		expect(job.ratedPowerW).toBeNull();
		expect(job.customer.email).toBeNull();
		expect(job.technician).toBeNull();
	});

	it('reuses a customer by e-mail (any case), else by name and phone', () => {
		const a = createJob(db, intake(), 'tech');
		const b = createJob(
			db,
			intake({ customerName: 'G. Fallowmere', customerEmail: 'GRETA@example.net' }),
			'tech'
		);
		expect(b.customer.id).toBe(a.customer.id);
		const c = createJob(
			db,
			intake({ customerName: 'Lio Brent', customerEmail: '', customerPhone: '555-0101' }),
			'tech'
		);
		const d = createJob(
			db,
			intake({ customerName: 'lio brent', customerEmail: '', customerPhone: '555-0101' }),
			'tech'
		);
		const e = createJob(
			db,
			intake({ customerName: 'Lio Brent', customerEmail: '', customerPhone: '555-0999' }),
			'tech'
		);
		expect(d.customer.id).toBe(c.customer.id);
		expect(e.customer.id).not.toBe(c.customer.id);
		expect(db.select().from(table.customers).all()).toHaveLength(3);
	});

	it('takes an existing customer by id, and refuses an unknown one', () => {
		const a = createJob(db, intake(), 'tech');
		const b = createJob(db, intake({ customerId: a.customer.id, customerName: '' }), 'tech');
		expect(b.customer.id).toBe(a.customer.id);
		expect(issuesOf(() => createJob(db, intake({ customerId: 999, customerName: '' }), 'tech'))).toEqual([
			{ path: 'customerId', message: 'No such customer' }
		]);
	});

	it('names each bad field, and stores nothing', () => {
		const issues = issuesOf(() =>
			createJob(
				db,
				intake({ customerName: '', make: ' ', year: 1850, ratedLoadOhms: 0, promisedDate: '2026-02-30' }),
				'tech'
			)
		);
		expect(issues.map((i) => i.path).sort()).toEqual([
			'customerName',
			'make',
			'promisedDate',
			'ratedLoadOhms',
			'year'
		]);
		expect(
			issuesOf(() => createJob(db, { ...intake(), category: 'jukebox' } as unknown as JobIntake, 'tech'))[0]
				.path
		).toBe('category');
		expect(db.select().from(table.jobs).all()).toHaveLength(0);
		expect(db.select().from(table.customers).all()).toHaveLength(0);
	});

	it('refuses to assign an unknown or deactivated account', () => {
		expect(issuesOf(() => createJob(db, intake({ technicianId: 'gone' }), 'tech'))).toEqual([
			{ path: 'technicianId', message: 'Choose an active member of staff' }
		]);
		expect(statusOf(() => createJob(db, intake({ technicianId: 'nobody' }), 'tech'))).toBe(400);
		expect(db.select().from(table.customers).all()).toHaveLength(0);
	});
});

describe('edits', () => {
	it('changes unit details and assignment, not status', () => {
		const job = createJob(db, intake(), 'tech');
		const edited = updateJob(db, job.id, { model: 'CR-7410', technicianId: 'tech2', serial: '' });
		expect(edited).toMatchObject({
			model: 'CR-7410',
			serial: null,
			technician: { id: 'tech2', name: 'Niko Brambleton' }
		});
		expect(statusOf(() => updateJob(db, job.id, { status: 'approved' } as never))).toBe(400);
		expect(statusOf(() => updateJob(db, job.id, {}))).toBe(400);
		expect(statusOf(() => updateJob(db, 424242, { model: 'X' }))).toBe(404);
		expect(getJob(db, job.id)!.status).toBe('received');
	});
});

/**
 * Approve as a sign-off does (sign-off.test.ts covers the signature itself): the one move the
 * status route refuses.
 */
function approve(db: Db, id: number, actorId: string, note: string | null = null) {
	db.transaction((tx) =>
		recordStatusChange(tx, id, { from: 'awaiting-review', to: 'approved', actorId, note })
	);
	return getJob(db, id)!;
}

describe('status changes', () => {
	it('walks the path, recording who moved it from what to what', () => {
		const job = createJob(db, intake(), 'tech');
		for (const s of ['diagnosing', 'repairing', 'testing', 'awaiting-review'] as const)
			changeStatus(db, job.id, { status: s }, TECH);
		const approved = approve(db, job.id, 'sup', 'Figures within limits');
		expect(approved.status).toBe('approved');
		expect(approved.history.map((h) => [h.fromStatus, h.toStatus, h.userName])).toEqual([
			[null, 'received', 'Tamsin Oakridge'],
			['received', 'diagnosing', 'Tamsin Oakridge'],
			['diagnosing', 'repairing', 'Tamsin Oakridge'],
			['repairing', 'testing', 'Tamsin Oakridge'],
			['testing', 'awaiting-review', 'Tamsin Oakridge'],
			['awaiting-review', 'approved', 'Rowan Thistlewood']
		]);
		expect(approved.history.at(-1)!.note).toBe('Figures within limits');
		expect(changeStatus(db, job.id, { status: 'returned' }, TECH).status).toBe('returned');
	});

	it('never approves through a status move: 403 for a technician, 409 (sign-off is the way) for others', () => {
		const job = createJob(db, intake(), 'tech');
		for (const s of ['diagnosing', 'repairing', 'testing', 'awaiting-review'] as const)
			changeStatus(db, job.id, { status: s }, TECH);
		expect(statusOf(() => changeStatus(db, job.id, { status: 'approved' }, TECH))).toBe(403);
		for (const actor of [SUP, ADMIN]) {
			expect(() => changeStatus(db, job.id, { status: 'approved' }, actor)).toThrow(SIGN_OFF_IS_THE_WAY);
		}
		expect(getJob(db, job.id)!.status).toBe('awaiting-review');
		expect(getJob(db, job.id)!.history).toHaveLength(5);
	});

	it('refuses moves the path does not allow (409)', () => {
		const job = createJob(db, intake(), 'tech');
		expect(statusOf(() => changeStatus(db, job.id, { status: 'testing' }, TECH))).toBe(409);
		expect(statusOf(() => changeStatus(db, job.id, { status: 'received' }, TECH))).toBe(409);
		// Even a supervisor cannot approve a job that was never reviewed.
		expect(statusOf(() => changeStatus(db, job.id, { status: 'approved' }, SUP))).toBe(409);
		expect(statusOf(() => changeStatus(db, job.id, { status: 'bogus' } as never, TECH))).toBe(400);
		expect(statusOf(() => changeStatus(db, 999, { status: 'diagnosing' }, TECH))).toBe(404);
	});

	it('puts a job on hold and resumes it, remembering where it was', () => {
		const job = createJob(db, intake(), 'tech');
		changeStatus(db, job.id, { status: 'diagnosing' }, TECH);
		changeStatus(db, job.id, { status: 'repairing' }, TECH);
		const held = changeStatus(db, job.id, { status: 'on-hold', note: 'Customer abroad' }, TECH);
		expect(held.heldFrom).toBe('repairing');
		expect(statusOf(() => changeStatus(db, job.id, { status: 'approved' }, SUP))).toBe(409);
		const resumed = changeStatus(db, job.id, { status: 'repairing' }, TECH);
		expect(resumed.status).toBe('repairing');
		expect(resumed.heldFrom).toBeNull();
	});

	it('closes a declined job by returning it; a returned job is final', () => {
		const job = createJob(db, intake(), 'tech');
		changeStatus(db, job.id, { status: 'declined' }, TECH);
		changeStatus(db, job.id, { status: 'returned' }, TECH);
		for (const s of JOB_STATUSES)
			expect(statusOf(() => changeStatus(db, job.id, { status: s }, ADMIN))).toBe(409);
	});

	it('writes the status and its history row in one transaction', () => {
		const job = createJob(db, intake(), 'tech');
		// Make the history insert fail: the status change must roll back with it.
		db.$client.exec(
			"CREATE TRIGGER no_history BEFORE INSERT ON job_status_history BEGIN SELECT RAISE(ABORT, 'history refused'); END"
		);
		expect(() => changeStatus(db, job.id, { status: 'diagnosing' }, TECH)).toThrow(/history refused/);
		db.$client.exec('DROP TRIGGER no_history');
		expect(getJob(db, job.id)!.status).toBe('received');
	});
});

describe('the sign-off lock', () => {
	/** A job walked to approval by the technician and signed off by the supervisor, with one part. */
	function approvedJob() {
		const job = createJob(db, intake(), 'tech');
		const part = addPart(db, job.id, partSchema.parse({ refDes: 'C1', description: 'Filter cap' }));
		for (const s of ['diagnosing', 'repairing', 'testing', 'awaiting-review'] as const)
			changeStatus(db, job.id, { status: s }, TECH);
		approve(db, job.id, 'sup', 'Signed off');
		return { id: job.id, partId: part.id };
	}

	/** The refusal a call gets: its status and message. */
	function refusal(fn: () => unknown): { status: number; message: string } | 'ok' {
		try {
			fn();
			return 'ok';
		} catch (e) {
			if (isDomainError(e)) return { status: e.status, message: e.message };
			throw e;
		}
	}
	const LOCKED = { status: 409, message: JOB_LOCKED_MESSAGE };

	it('refuses edits, parts, log entries and status moves on an approved job, and stores nothing', () => {
		const { id, partId } = approvedJob();
		const before = getJob(db, id)!;
		expect(refusal(() => updateJob(db, id, { complaint: 'Changed after sign-off' }))).toEqual(LOCKED);
		expect(refusal(() => updateJob(db, id, { technicianId: 'tech2' }))).toEqual(LOCKED);
		expect(refusal(() => addLogEntry(db, id, { text: 'Late note', minutes: 5 }, 'tech'))).toEqual(LOCKED);
		expect(refusal(() => addPart(db, id, partSchema.parse({ refDes: 'Q3', description: 'Output' })))).toEqual(
			LOCKED
		);
		expect(refusal(() => updatePart(db, id, partId, { state: 'fitted' }))).toEqual(LOCKED);
		expect(refusal(() => deletePart(db, id, partId))).toEqual(LOCKED);
		// The old escape: put it on hold, then back to the bench. Not any more, for any role.
		for (const actor of [TECH, SUP, ADMIN])
			for (const status of ['on-hold', 'declined', 'testing', 'repairing'] as const)
				expect(refusal(() => changeStatus(db, id, { status }, actor))).toEqual(LOCKED);
		const after = getJob(db, id)!;
		expect(after).toEqual(before);
		expect(refusal(() => assertJobOpen(db, id))).toEqual(LOCKED);
	});

	it('still lets an approved unit go home, and then a returned job is locked too', () => {
		const { id } = approvedJob();
		expect(changeStatus(db, id, { status: 'returned' }, TECH).status).toBe('returned');
		expect(refusal(() => addLogEntry(db, id, { text: 'Customer called', minutes: 0 }, 'tech'))).toEqual(
			LOCKED
		);
		expect(refusal(() => changeStatus(db, id, { status: 'on-hold' }, ADMIN))).toEqual(LOCKED);
	});

	it('offers only the moves the lock allows, and never approval (the review page signs)', () => {
		for (const role of ['technician', 'supervisor', 'admin'] as const) {
			expect(statusMoves('approved', role)).toEqual(['returned']);
			expect(statusMoves('returned', role)).toEqual([]);
			for (const s of JOB_STATUSES.filter((x) => x !== 'approved' && x !== 'returned'))
				expect(statusMoves(s, role)).toEqual(allowedNextStatuses(s, role).filter((x) => x !== 'approved'));
		}
		expect(statusMoves('awaiting-review', 'supervisor')).toEqual([
			'repairing',
			'testing',
			'on-hold',
			'declined'
		]);
	});

	it('lets only a supervisor or admin reopen, with a reason of 3–500 characters, recorded in the history', () => {
		const { id } = approvedJob();
		expect(refusal(() => reopenJob(db, id, { reason: 'Customer reports hum again' }, TECH))).toMatchObject({
			status: 403
		});
		expect(refusal(() => reopenJob(db, id, { reason: ' x ' }, SUP))).toMatchObject({ status: 400 });
		expect(refusal(() => reopenJob(db, id, { reason: 'y'.repeat(501) }, SUP))).toMatchObject({ status: 400 });
		expect(refusal(() => reopenJob(db, id, {} as never, SUP))).toMatchObject({ status: 400 });
		expect(getJob(db, id)!.status).toBe('approved');
		expect(getJob(db, id)!.history).toHaveLength(6);

		const reopened = reopenJob(db, id, { reason: '  Right channel THD out of limit on recheck  ' }, SUP);
		expect(reopened.status).toBe('awaiting-review');
		expect(reopened.history).toHaveLength(7);
		expect(reopened.history.at(-1)).toMatchObject({
			fromStatus: 'approved',
			toStatus: 'awaiting-review',
			note: 'Reopened: Right channel THD out of limit on recheck',
			userId: 'sup',
			userName: 'Rowan Thistlewood'
		});
		// Open again: work goes on, and it is signed off afresh.
		expect(assertJobOpen(db, id).id).toBe(id);
		changeStatus(db, id, { status: 'repairing' }, TECH);
		addLogEntry(db, id, { text: 'Replaced the bias trimmer', minutes: 20 }, 'tech');
		expect(getJob(db, id)!.log).toHaveLength(1);
	});

	it('sends a returned unit back to diagnosis, and refuses to reopen a job that is not signed off', () => {
		const { id } = approvedJob();
		changeStatus(db, id, { status: 'returned' }, TECH);
		expect(reopenJob(db, id, { reason: 'Came back under warranty' }, ADMIN).status).toBe('diagnosing');
		expect(refusal(() => reopenJob(db, id, { reason: 'Again?' }, ADMIN))).toMatchObject({ status: 409 });
		expect(refusal(() => reopenJob(db, 9999, { reason: 'No such job' }, ADMIN))).toMatchObject({
			status: 404
		});
		expect(refusal(() => assertJobOpen(db, 9999))).toMatchObject({ status: 404 });
	});
});

describe('work log and parts', () => {
	it('adds log entries with the author’s name and totals the minutes', () => {
		const job = createJob(db, intake(), 'tech');
		const entry = addLogEntry(db, job.id, { text: 'Replaced C12', minutes: 25 }, 'tech');
		expect(entry).toMatchObject({ text: 'Replaced C12', minutes: 25, authorName: 'Tamsin Oakridge' });
		addLogEntry(db, job.id, { text: 'Checked bias', minutes: 20 }, 'sup');
		const detail = getJob(db, job.id)!;
		expect(detail.log.map((l) => l.authorName)).toEqual(['Tamsin Oakridge', 'Rowan Thistlewood']);
		expect(detail.logMinutesTotal).toBe(45);
		expect(statusOf(() => addLogEntry(db, job.id, { text: '  ', minutes: 5 }, 'tech'))).toBe(400);
		expect(statusOf(() => addLogEntry(db, job.id, { text: 'x', minutes: -1 }, 'tech'))).toBe(400);
		expect(statusOf(() => addLogEntry(db, 999, { text: 'x', minutes: 1 }, 'tech'))).toBe(404);
	});

	it('keeps parts with line totals and a job total in cents', () => {
		const job = createJob(db, intake(), 'tech');
		const q = addPart(
			db,
			job.id,
			partSchema.parse({ refDes: 'q412', description: 'Output transistor', quantity: 2, unitCostCents: 645 })
		);
		expect(q).toMatchObject({ refDes: 'Q412', state: 'ordered', lineTotalCents: 1290 });
		addPart(db, job.id, partSchema.parse({ refDes: 'RL1', description: 'Relay', unitCostCents: 890 }));
		expect(getJob(db, job.id)!.partsTotalCents).toBe(2180);

		const fitted = updatePart(db, job.id, q.id, { state: 'fitted', verificationNote: 'hFE 85/88 matched' });
		expect(fitted).toMatchObject({
			state: 'fitted',
			verificationNote: 'hFE 85/88 matched',
			lineTotalCents: 1290
		});
		expect(updatePart(db, job.id, q.id, { quantity: 3 }).lineTotalCents).toBe(1935);
		expect(getJob(db, job.id)!.partsTotalCents).toBe(2825);

		deletePart(db, job.id, q.id);
		expect(getJob(db, job.id)!.parts.map((p) => p.refDes)).toEqual(['RL1']);
		expect(getJob(db, job.id)!.partsTotalCents).toBe(890);
	});

	it('answers 404 for a part on another job and 400 for bad part input', () => {
		const a = createJob(db, intake(), 'tech');
		const b = createJob(db, intake(), 'tech');
		const part = addPart(db, a.id, partSchema.parse({ refDes: 'C1', description: 'Cap' }));
		expect(statusOf(() => updatePart(db, b.id, part.id, { state: 'fitted' }))).toBe(404);
		expect(statusOf(() => deletePart(db, b.id, part.id))).toBe(404);
		expect(statusOf(() => updatePart(db, a.id, part.id, { quantity: 0 }))).toBe(400);
		expect(
			statusOf(() =>
				addPart(db, a.id, { refDes: '', description: 'x', quantity: 1, unitCostCents: 0, state: 'ordered' })
			)
		).toBe(400);
		expect(
			statusOf(() =>
				addPart(db, a.id, {
					refDes: 'C2',
					description: 'x',
					quantity: 1,
					unitCostCents: 1.5,
					state: 'ordered'
				})
			)
		).toBe(400);
		expect(getJob(db, a.id)!.parts).toHaveLength(1);
	});

	it('moves the job to the top of "recently updated" when work is logged', () => {
		const a = createJob(db, intake({ make: 'Alpha' }), 'tech');
		createJob(db, intake({ make: 'Beta' }), 'tech');
		db.update(table.jobs)
			.set({ updatedAt: new Date('2020-01-01T00:00:00Z') })
			.where(eq(table.jobs.id, a.id))
			.run();
		expect(listJobs(db, { sort: '-updated' }).items[0].make).toBe('Beta');
		addLogEntry(db, a.id, { text: 'Bench time', minutes: 5 }, 'tech');
		expect(listJobs(db, { sort: '-updated' }).items[0].make).toBe('Alpha');
	});
});

describe('list', () => {
	function seedList() {
		const j = (over: Partial<JobIntake>) => createJob(db, intake(over), 'tech');
		const rows = [
			j({
				make: 'Corvane',
				model: 'CR-7400',
				customerName: 'Ines Halloran',
				customerEmail: 'ines@example.net',
				complaint: 'Dead',
				technicianId: 'tech',
				promisedDate: '2026-05-01'
			}),
			j({
				make: 'Velmora',
				model: 'VA-120',
				customerName: 'Bram Ellsworthy',
				customerEmail: 'bram@example.net',
				complaint: 'Hum when warm',
				technicianId: 'tech2',
				promisedDate: '2026-04-01'
			}),
			j({
				make: 'Halvane',
				model: 'HP-250',
				serial: 'HP2-30991',
				customerName: 'Wren Castellow',
				customerEmail: 'wren@example.net',
				complaint: '100% distortion at 1 kHz',
				technicianId: ''
			}),
			j({
				make: 'orlund',
				model: 'OT-55',
				customerName: 'Ines Halloran',
				customerEmail: 'ines@example.net',
				complaint: 'Weak FM',
				technicianId: 'tech',
				promisedDate: '2026-03-01'
			})
		];
		changeStatus(db, rows[1].id, { status: 'diagnosing' }, TECH);
		changeStatus(db, rows[2].id, { status: 'declined' }, TECH);
		return rows;
	}

	it('searches make, model, serial, customer name and complaint, and job numbers', () => {
		const rows = seedList();
		const makes = (q: string) =>
			listJobs(db, { q })
				.items.map((i) => i.make)
				.sort();
		expect(makes('velm')).toEqual(['Velmora']);
		expect(makes('ot-55')).toEqual(['orlund']);
		expect(makes('30991')).toEqual(['Halvane']);
		expect(makes('halloran')).toEqual(['Corvane', 'orlund']);
		expect(makes('warm')).toEqual(['Velmora']);
		expect(makes(`#${rows[2].id}`)).toEqual(['Halvane']);
		// LIKE wildcards in the search are literal characters.
		expect(makes('100%')).toEqual(['Halvane']);
		expect(makes('_')).toEqual([]);
	});

	it('keeps the search index in step with edits and customer renames', () => {
		const rows = seedList();
		const makes = (q: string) =>
			listJobs(db, { q })
				.items.map((i) => i.make)
				.sort();
		updateJob(db, rows[0].id, { model: 'Quasar-9' });
		expect(makes('quasar')).toEqual(['Corvane']);
		expect(makes('CR-7400')).toEqual([]);
		db.update(table.customers)
			.set({ name: 'Solène Marchetti' })
			.where(eq(table.customers.id, rows[1].customer.id))
			.run();
		expect(makes('SOLÈNE')).toEqual(['Velmora']);
		expect(makes('Ellsworthy')).toEqual([]);
		db.delete(table.jobStatusHistory).where(eq(table.jobStatusHistory.jobId, rows[2].id)).run();
		db.delete(table.jobs).where(eq(table.jobs.id, rows[2].id)).run();
		expect(makes('30991')).toEqual([]);
	});

	it('searches short terms and odd characters without error', () => {
		seedList();
		const makes = (q: string) =>
			listJobs(db, { q })
				.items.map((i) => i.make)
				.sort();
		expect(makes('55')).toEqual(['orlund']);
		expect(makes('hp')).toEqual(['Halvane']);
		expect(makes('"dead"')).toEqual([]);
		expect(makes('Dead" OR "x')).toEqual([]);
		expect(makes('*')).toEqual([]);
		expect(listJobs(db, { q: 'NEAR(dead weak)' }).total).toBe(0);
	});

	it('filters by status (lists, open, closed) and technician (id or none)', () => {
		seedList();
		const status = (s: string) => {
			const q = jobListQuerySchema.parse({ status: s });
			return listJobs(db, q)
				.items.map((i) => i.make)
				.sort();
		};
		expect(status('diagnosing')).toEqual(['Velmora']);
		expect(status('received,declined')).toEqual(['Corvane', 'Halvane', 'orlund']);
		expect(status('closed')).toEqual(['Halvane']);
		expect(status('open')).toEqual(['Corvane', 'Velmora', 'orlund']);
		expect(
			listJobs(db, { technician: 'tech' })
				.items.map((i) => i.make)
				.sort()
		).toEqual(['Corvane', 'orlund']);
		expect(listJobs(db, { technician: 'none' }).items.map((i) => i.make)).toEqual(['Halvane']);
		expect(listJobs(db, { technician: 'tech2', status: ['received'] }).total).toBe(0);
	});

	it('carries customer and technician names', () => {
		seedList();
		const item = listJobs(db, { q: 'Velmora' }).items[0];
		expect(item).toMatchObject({
			customerName: 'Bram Ellsworthy',
			technicianName: 'Niko Brambleton',
			status: 'diagnosing'
		});
		expect(listJobs(db, { q: 'Halvane' }).items[0].technicianName).toBeNull();
	});

	it('sorts by each key, both ways', () => {
		seedList();
		const order = (sort: string) => listJobs(db, jobListQuerySchema.parse({ sort })).items.map((i) => i.make);
		expect(order('make')).toEqual(['Corvane', 'Halvane', 'orlund', 'Velmora']);
		expect(order('-make')).toEqual(['Velmora', 'orlund', 'Halvane', 'Corvane']);
		expect(order('customer')).toEqual(['Velmora', 'orlund', 'Corvane', 'Halvane']);
		// Promised dates ascending, undated last either way.
		expect(order('promised')).toEqual(['orlund', 'Velmora', 'Corvane', 'Halvane']);
		expect(order('-promised')).toEqual(['Corvane', 'Velmora', 'orlund', 'Halvane']);
		// Along the working path: received, diagnosing … declined last.
		expect(order('status').slice(-2)).toEqual(['Velmora', 'Halvane']);
		expect(order('id')).toEqual(['Corvane', 'Velmora', 'Halvane', 'orlund']);
		expect(order('-created')).toEqual(['orlund', 'Halvane', 'Velmora', 'Corvane']);
		// By technician name; unassigned last.
		expect(order('technician')).toEqual(['Velmora', 'orlund', 'Corvane', 'Halvane']);
		expect(order('-technician')).toEqual(['orlund', 'Corvane', 'Velmora', 'Halvane']);
	});

	it('pages with a total', () => {
		seedList();
		const p1 = listJobs(db, { sort: 'id', page: 1, pageSize: 3 });
		const p2 = listJobs(db, { sort: 'id', page: 2, pageSize: 3 });
		expect(p1).toMatchObject({ total: 4, page: 1, pageSize: 3 });
		expect(p1.items).toHaveLength(3);
		expect(p2.items.map((i) => i.make)).toEqual(['orlund']);
		expect(listJobs(db, { page: 9, pageSize: 3 }).items).toEqual([]);
	});
});

describe('list query validation', () => {
	const bad = (q: Record<string, string>) => jobListQuerySchema.safeParse(q).success === false;
	it('fills defaults and treats empty values as no filter', () => {
		expect(jobListQuerySchema.parse({})).toEqual({ sort: '-updated', page: 1, pageSize: 25 });
		expect(
			jobListQuerySchema.parse({ q: '', status: '', technician: '', sort: '', page: '', pageSize: '' })
		).toEqual({
			sort: '-updated',
			page: 1,
			pageSize: 25
		});
		expect(jobListQuerySchema.parse({ page: '3', pageSize: '100' })).toMatchObject({
			page: 3,
			pageSize: 100
		});
	});
	it('refuses what it cannot honour', () => {
		expect(bad({ pageSize: '101' })).toBe(true);
		expect(bad({ pageSize: '0' })).toBe(true);
		expect(bad({ page: 'two' })).toBe(true);
		expect(bad({ sort: 'price' })).toBe(true);
		expect(bad({ sort: '--updated' })).toBe(true);
		expect(bad({ status: 'received,broken' })).toBe(true);
		expect(bad({ q: 'x'.repeat(101) })).toBe(true);
	});
});
