// The job queue: list with search/filter/sort/pages, job detail, intake, edits, status
// changes (with history in the same transaction), work log and parts, and the sign-off lock
// (`assertJobOpen`, the one rule every service that adds to a job calls; `reopenJob`). Results
// are plain JSON-safe objects (dates as ISO strings), identical for page loads and the JSON API.
import { aliasedTable, and, asc, count, desc, eq, inArray, isNull, or, sql, type SQL } from 'drizzle-orm';
import type { BaseSQLiteDatabase } from 'drizzle-orm/sqlite-core';
import type { RunResult } from 'better-sqlite3';
import type { Db } from './db/open';
import * as table from './db/schema';
import type { JobStatus, PartState, Role, UnitCategory } from './db/schema';
import type { RatingBasis } from '../schemas/enums';
import { badRequest } from './api';
import { DomainError } from './errors';
import { validate } from './validate';
import { audit, changes as diff } from './audit';
import { reopenSchema, type ReopenInput } from '../schemas/job-lock';
import {
	JOB_STATUSES,
	allowedNextStatuses,
	jobIntakeSchema,
	jobPatchSchema,
	logEntrySchema,
	nextStatuses,
	isSystemMove,
	SYSTEM_MOVE_MESSAGE,
	partPatchSchema,
	partSchema,
	roleMayEnter,
	statusChangeSchema,
	type JobIntake,
	type JobListQuery,
	type JobPatch,
	type JobSort,
	type LogEntryInput,
	type PartInput,
	type PartPatch,
	type StatusChange
} from '../schemas/jobs';

// ── result shapes ───────────────────────────────────────────────────────────

export interface JobListItem {
	id: number;
	category: UnitCategory;
	make: string;
	model: string;
	serial: string | null;
	complaint: string;
	status: JobStatus;
	customerId: number;
	customerName: string;
	technicianId: string | null;
	technicianName: string | null;
	promisedDate: string | null;
	createdAt: string;
	updatedAt: string;
}

export interface JobList {
	items: JobListItem[];
	total: number;
	page: number;
	pageSize: number;
}

export interface StatusHistoryEntry {
	id: number;
	fromStatus: JobStatus | null;
	toStatus: JobStatus;
	note: string | null;
	userId: string | null;
	userName: string | null;
	createdAt: string;
}

export interface WorkLogItem {
	id: number;
	text: string;
	minutes: number;
	authorId: string;
	authorName: string;
	/** Shown on the customer's report. */
	forCustomer: boolean;
	createdAt: string;
}

export interface PartItem {
	id: number;
	jobId: number;
	refDes: string;
	description: string;
	value: string | null;
	quantity: number;
	unitCostCents: number;
	/** quantity × unit cost. */
	lineTotalCents: number;
	supplier: string | null;
	state: PartState;
	verificationNote: string | null;
	createdAt: string;
	updatedAt: string;
}

export interface JobDetail {
	id: number;
	category: UnitCategory;
	make: string;
	model: string;
	serial: string | null;
	year: number | null;
	complaint: string;
	ratedPowerW: number | null;
	ratedLoadOhms: number | null;
	ratedPowerBasis: RatingBasis | null;
	ratedThdPercent: number | null;
	unrestored: boolean;
	status: JobStatus;
	/** While on hold: the status the job was in before, where it usually resumes. */
	heldFrom: JobStatus | null;
	promisedDate: string | null;
	createdAt: string;
	updatedAt: string;
	customer: { id: number; name: string; email: string | null; phone: string | null };
	technician: { id: string; name: string } | null;
	history: StatusHistoryEntry[];
	log: WorkLogItem[];
	logMinutesTotal: number;
	parts: PartItem[];
	partsTotalCents: number;
}

export interface Actor {
	id: string;
	role: Role;
}

// ── helpers ─────────────────────────────────────────────────────────────────

/** The database or a transaction on it: helpers run inside either. */
type Conn = BaseSQLiteDatabase<'sync', RunResult, typeof table>;

const iso = (d: Date) => d.toISOString();
/** Empty form fields arrive as ''; store them as null. */
const blank = <T>(v: T | '' | null | undefined): T | null => (v === '' || v === undefined ? null : v);

function escapeLike(s: string): string {
	return s.replace(/[\\%_]/g, (c) => `\\${c}`);
}

export function requireJob(db: Conn, id: number): table.Job {
	const job = db.select().from(table.jobs).where(eq(table.jobs.id, id)).get();
	if (!job) throw new DomainError('not-found', 'No such job');
	return job;
}

function touchJob(db: Conn, id: number, at = new Date()): void {
	db.update(table.jobs).set({ updatedAt: at }).where(eq(table.jobs.id, id)).run();
}

/** An assignee must be an active account: 400 naming the field otherwise. */
function checkTechnician(db: Conn, technicianId: string | null): void {
	if (!technicianId) return;
	const user = db
		.select({ active: table.users.active })
		.from(table.users)
		.where(eq(table.users.id, technicianId))
		.get();
	if (!user || !user.active) {
		badRequest('Invalid input', [{ path: 'technicianId', message: 'Choose an active member of staff' }]);
	}
}

/**
 * Move a job from `from` to `to` inside `tx`: the job row, its history row and the audit entry
 * together. The status route and the sign-off service both go through here.
 */
export function recordStatusChange(
	tx: Conn,
	jobId: number,
	move: { from: JobStatus; to: JobStatus; actorId: string | null; note: string | null; at?: Date }
): void {
	const now = move.at ?? new Date();
	tx.update(table.jobs).set({ status: move.to, updatedAt: now }).where(eq(table.jobs.id, jobId)).run();
	tx.insert(table.jobStatusHistory)
		.values({
			jobId,
			userId: move.actorId,
			fromStatus: move.from,
			toStatus: move.to,
			note: move.note,
			createdAt: now
		})
		.run();
	audit(tx, {
		actorId: move.actorId,
		action: 'job.status-changed',
		jobId,
		subject: `job #${jobId}`,
		detail: { from: move.from, to: move.to, note: move.note },
		at: now
	});
}

// ── sign-off lock ───────────────────────────────────────────────────────────

/** Statuses that mean the job is signed off: its record is locked until a supervisor reopens it. */
export const LOCKED_STATUSES: readonly JobStatus[] = ['approved', 'returned'];

export const JOB_LOCKED_MESSAGE =
	'This job is signed off and locked; a supervisor can reopen it with a reason';

export function isLockedStatus(status: JobStatus): boolean {
	return LOCKED_STATUSES.includes(status);
}

/** The one move a locked job still takes: the approved unit goes back to its owner. */
const LOCKED_MOVES: Partial<Record<JobStatus, readonly JobStatus[]>> = { approved: ['returned'] };

/**
 * Where a reopened job resumes: an approval withdrawn goes back to review; a unit that came
 * back after it was returned is diagnosed again.
 */
const REOPEN_TO: Partial<Record<JobStatus, JobStatus>> = {
	approved: 'awaiting-review',
	returned: 'diagnosing'
};

/**
 * The job, when it may still be changed: 404 when there is no such job, 409 when it is signed
 * off (approved or returned). Every service that edits a job or adds to it (details, parts,
 * work log, snapshots, soak runs) calls this, inside its transaction when it has one.
 */
export function assertJobOpen(db: Conn, jobId: number): table.Job {
	const job = requireJob(db, jobId);
	if (isLockedStatus(job.status)) throw new DomainError('conflict', JOB_LOCKED_MESSAGE);
	return job;
}

/**
 * The statuses `role` may move a job to from `from`, with the lock applied (what the UI offers).
 * Never `approved`: a job is approved only by a signature (the review page).
 */
export function statusMoves(from: JobStatus, role: Role): JobStatus[] {
	const moves = allowedNextStatuses(from, role).filter((s) => s !== 'approved');
	return isLockedStatus(from) ? moves.filter((s) => LOCKED_MOVES[from]?.includes(s)) : moves;
}

/**
 * A supervisor or admin reopens a signed-off job with a reason (3–500 characters): it goes back
 * to review (approved) or to diagnosis (returned), and the history records who, when and why.
 * 403 for other roles, 409 for a job that is not signed off.
 */
export function reopenJob(db: Db, id: number, input: ReopenInput, actor: Actor): JobDetail {
	const data = validate(reopenSchema, input);
	if (actor.role !== 'supervisor' && actor.role !== 'admin')
		throw new DomainError('forbidden', 'Only a supervisor or admin may reopen a signed-off job');
	db.transaction((tx) => {
		const job = requireJob(tx, id);
		const to = REOPEN_TO[job.status];
		if (!to) throw new DomainError('conflict', 'This job is not signed off, so there is nothing to reopen');
		const now = new Date();
		tx.update(table.jobs).set({ status: to, updatedAt: now }).where(eq(table.jobs.id, id)).run();
		tx.insert(table.jobStatusHistory)
			.values({
				jobId: id,
				userId: actor.id,
				fromStatus: job.status,
				toStatus: to,
				note: `Reopened: ${data.reason}`,
				createdAt: now
			})
			.run();
		audit(tx, {
			actorId: actor.id,
			action: 'job.reopened',
			jobId: id,
			subject: `job #${id}`,
			detail: { from: job.status, to, reason: data.reason },
			at: now
		});
		// The sign-off stays in the record; a supersession row says it no longer stands.
		supersedeSignOffs(tx, id, actor.id, data.reason, now);
	});
	return getJob(db, id)!;
}

/** Mark every standing approval of the job superseded (sign-offs themselves never change). */
function supersedeSignOffs(tx: Conn, jobId: number, actorId: string, reason: string, at: Date): void {
	const standing = tx
		.select({ id: table.signOffs.id })
		.from(table.signOffs)
		.leftJoin(table.signOffSupersessions, eq(table.signOffSupersessions.signOffId, table.signOffs.id))
		.where(
			and(
				eq(table.signOffs.jobId, jobId),
				eq(table.signOffs.decision, 'approve'),
				isNull(table.signOffSupersessions.signOffId)
			)
		)
		.all();
	for (const { id } of standing) {
		tx.insert(table.signOffSupersessions)
			.values({ signOffId: id, supersededAt: at, supersededBy: actorId, reason })
			.run();
		audit(tx, {
			actorId,
			action: 'sign-off.superseded',
			jobId,
			subject: `sign-off #${id} of job #${jobId}`,
			detail: { signOffId: id, reason },
			at
		});
	}
}

// ── list ────────────────────────────────────────────────────────────────────

const technicians = aliasedTable(table.users, 'technician');

const STATUS_ORDER = sql.raw(
	`CASE "jobs"."status" ${JOB_STATUSES.map((s, i) => `WHEN '${s}' THEN ${i}`).join(' ')} END`
);

function orderFor(sort: JobSort): SQL[] {
	const descending = sort.startsWith('-');
	const key = sort.replace(/^-/, '');
	const dir = (col: SQL | Parameters<typeof asc>[0]) => (descending ? desc(col) : asc(col));
	switch (key) {
		case 'created':
			return [dir(table.jobs.createdAt), dir(table.jobs.id)];
		case 'promised':
			// Jobs without a promised date sort last either way.
			return [
				asc(sql`${table.jobs.promisedDate} IS NULL`),
				dir(table.jobs.promisedDate),
				desc(table.jobs.id)
			];
		case 'status':
			return [dir(STATUS_ORDER), desc(table.jobs.updatedAt), desc(table.jobs.id)];
		case 'make':
			return [
				dir(sql`${table.jobs.make} COLLATE NOCASE`),
				dir(sql`${table.jobs.model} COLLATE NOCASE`),
				desc(table.jobs.id)
			];
		case 'model':
			return [dir(sql`${table.jobs.model} COLLATE NOCASE`), desc(table.jobs.id)];
		case 'customer':
			return [dir(sql`${table.customers.name} COLLATE NOCASE`), desc(table.jobs.id)];
		case 'technician':
			return [
				asc(sql`${technicians.name} IS NULL`),
				dir(sql`${technicians.name} COLLATE NOCASE`),
				desc(table.jobs.id)
			];
		case 'id':
			return [dir(table.jobs.id)];
		case 'updated':
		default:
			return [dir(table.jobs.updatedAt), dir(table.jobs.id)];
	}
}

/**
 * One page of the queue. `q` searches make, model, serial, customer name and complaint
 * (and matches a job number such as `42` or `#42`); `technician` is a user id or `none`.
 * The caller resolves `me` to a user id.
 */
export function listJobs(db: Db, query: Partial<JobListQuery>): JobList {
	const page = query.page ?? 1;
	const pageSize = Math.min(query.pageSize ?? 25, 100);
	const conditions: SQL[] = [];

	const q = query.q?.trim();
	if (q) {
		const jobNumber = /^#(\d{1,12})$/.exec(q);
		if (jobNumber) {
			// "#42" names a job: no text search needed.
			conditions.push(eq(table.jobs.id, Number(jobNumber[1])));
		} else {
			const matches: SQL[] = [textMatch(q)];
			if (/^\d{1,12}$/.test(q)) matches.push(eq(table.jobs.id, Number(q)));
			conditions.push(or(...matches)!);
		}
	}
	if (query.status?.length) conditions.push(inArray(table.jobs.status, query.status));
	if (query.technician === 'none') conditions.push(isNull(table.jobs.technicianId));
	else if (query.technician) conditions.push(eq(table.jobs.technicianId, query.technician));
	const where = conditions.length ? and(...conditions) : undefined;

	const totalRow = db.select({ n: count() }).from(table.jobs).where(where).get();

	// Pick the page's ids first, joining only what the sort needs, then fetch those rows
	// with their names: SQLite then sorts thousands of narrow rows (often straight from an
	// index) and joins names for one page only.
	const sort = query.sort ?? '-updated';
	const key = sort.replace(/^-/, '');
	let idQuery = db.select({ id: table.jobs.id }).from(table.jobs).$dynamic();
	if (key === 'customer')
		idQuery = idQuery.innerJoin(table.customers, eq(table.customers.id, table.jobs.customerId));
	if (key === 'technician')
		idQuery = idQuery.leftJoin(technicians, eq(technicians.id, table.jobs.technicianId));
	const pageIds = idQuery
		.where(where)
		.orderBy(...orderFor(sort))
		.limit(pageSize)
		.offset((page - 1) * pageSize)
		.all()
		.map((r) => r.id);

	const found = pageIds.length
		? db
				.select({
					id: table.jobs.id,
					category: table.jobs.category,
					make: table.jobs.make,
					model: table.jobs.model,
					serial: table.jobs.serial,
					complaint: table.jobs.complaint,
					status: table.jobs.status,
					customerId: table.jobs.customerId,
					customerName: table.customers.name,
					technicianId: table.jobs.technicianId,
					technicianName: technicians.name,
					promisedDate: table.jobs.promisedDate,
					createdAt: table.jobs.createdAt,
					updatedAt: table.jobs.updatedAt
				})
				.from(table.jobs)
				.innerJoin(table.customers, eq(table.customers.id, table.jobs.customerId))
				.leftJoin(technicians, eq(technicians.id, table.jobs.technicianId))
				.where(inArray(table.jobs.id, pageIds))
				.all()
		: [];
	const byId = new Map(found.map((r) => [r.id, r]));
	const rows = pageIds.flatMap((id) => byId.get(id) ?? []);

	return {
		items: rows.map((r) => ({ ...r, createdAt: iso(r.createdAt), updatedAt: iso(r.updatedAt) })),
		total: totalRow?.n ?? 0,
		page,
		pageSize
	};
}

/**
 * Case-insensitive substring match on make, model, serial, complaint and customer name.
 * Three characters or more go through the trigram index (migration 0003_job_search);
 * shorter ones, which a trigram cannot match, scan the columns with LIKE.
 */
function textMatch(q: string): SQL {
	if ([...q].length >= 3) {
		// An FTS5 string literal: everything inside double quotes is literal text.
		const phrase = `"${q.replace(/"/g, '""')}"`;
		return sql`${table.jobs.id} IN (SELECT rowid FROM job_search WHERE job_search MATCH ${phrase})`;
	}
	const pattern = `%${escapeLike(q)}%`;
	const customerName = customerNameOf();
	return or(
		...[table.jobs.make, table.jobs.model, table.jobs.serial, table.jobs.complaint, customerName].map(
			(col) => sql`${col} LIKE ${pattern} ESCAPE '\\'`
		)
	)!;
}

/** The job's customer name as a scalar subquery, so a count needs no join. */
function customerNameOf(): SQL {
	return sql`(SELECT ${table.customers.name} FROM ${table.customers} WHERE ${table.customers.id} = ${table.jobs.customerId})`;
}

// ── detail ──────────────────────────────────────────────────────────────────

export function getJob(db: Db, id: number): JobDetail | null {
	const row = db
		.select({ job: table.jobs, customer: table.customers, technicianName: technicians.name })
		.from(table.jobs)
		.innerJoin(table.customers, eq(table.customers.id, table.jobs.customerId))
		.leftJoin(technicians, eq(technicians.id, table.jobs.technicianId))
		.where(eq(table.jobs.id, id))
		.get();
	if (!row) return null;
	const { job, customer } = row;

	const history = db
		.select({
			id: table.jobStatusHistory.id,
			fromStatus: table.jobStatusHistory.fromStatus,
			toStatus: table.jobStatusHistory.toStatus,
			note: table.jobStatusHistory.note,
			userId: table.jobStatusHistory.userId,
			userName: table.users.name,
			createdAt: table.jobStatusHistory.createdAt
		})
		.from(table.jobStatusHistory)
		.leftJoin(table.users, eq(table.users.id, table.jobStatusHistory.userId))
		.where(eq(table.jobStatusHistory.jobId, id))
		.orderBy(asc(table.jobStatusHistory.createdAt), asc(table.jobStatusHistory.id))
		.all()
		.map((h) => ({ ...h, createdAt: iso(h.createdAt) }));

	const log = db
		.select({
			id: table.workLog.id,
			text: table.workLog.text,
			minutes: table.workLog.minutes,
			authorId: table.workLog.authorId,
			authorName: table.users.name,
			forCustomer: table.workLog.forCustomer,
			createdAt: table.workLog.createdAt
		})
		.from(table.workLog)
		.innerJoin(table.users, eq(table.users.id, table.workLog.authorId))
		.where(eq(table.workLog.jobId, id))
		.orderBy(asc(table.workLog.createdAt), asc(table.workLog.id))
		.all()
		.map((l) => ({ ...l, createdAt: iso(l.createdAt) }));

	const parts = db
		.select()
		.from(table.parts)
		.where(eq(table.parts.jobId, id))
		.orderBy(asc(table.parts.id))
		.all()
		.map(toPartItem);

	let heldFrom: JobStatus | null = null;
	if (job.status === 'on-hold') {
		const intoHold = history.findLast((h) => h.toStatus === 'on-hold');
		heldFrom = intoHold?.fromStatus ?? null;
	}

	return {
		id: job.id,
		category: job.category,
		make: job.make,
		model: job.model,
		serial: job.serial,
		year: job.year,
		complaint: job.complaint,
		ratedPowerW: job.ratedPowerW,
		ratedLoadOhms: job.ratedLoadOhms,
		ratedPowerBasis: job.ratedPowerBasis,
		ratedThdPercent: job.ratedThdPercent,
		unrestored: job.unrestored,
		status: job.status,
		heldFrom,
		promisedDate: job.promisedDate,
		createdAt: iso(job.createdAt),
		updatedAt: iso(job.updatedAt),
		customer: { id: customer.id, name: customer.name, email: customer.email, phone: customer.phone },
		technician:
			job.technicianId && row.technicianName ? { id: job.technicianId, name: row.technicianName } : null,
		history,
		log,
		logMinutesTotal: log.reduce((sum, l) => sum + l.minutes, 0),
		parts,
		partsTotalCents: parts.reduce((sum, p) => sum + p.lineTotalCents, 0)
	};
}

function toPartItem(p: table.Part): PartItem {
	return {
		id: p.id,
		jobId: p.jobId,
		refDes: p.refDes,
		description: p.description,
		value: p.value,
		quantity: p.quantity,
		unitCostCents: p.unitCostCents,
		lineTotalCents: p.quantity * p.unitCostCents,
		supplier: p.supplier,
		state: p.state,
		verificationNote: p.verificationNote,
		createdAt: iso(p.createdAt),
		updatedAt: iso(p.updatedAt)
	};
}

// ── intake and edits ────────────────────────────────────────────────────────

/**
 * Find or create the customer for an intake: an explicit `customerId` (400 if unknown),
 * else a customer with the same e-mail, else one with the same name and phone.
 */
function resolveCustomer(db: Conn, input: JobIntake): number {
	if (input.customerId) {
		const found = db
			.select({ id: table.customers.id })
			.from(table.customers)
			.where(eq(table.customers.id, input.customerId))
			.get();
		if (!found) badRequest('Invalid input', [{ path: 'customerId', message: 'No such customer' }]);
		return found.id;
	}
	const name = input.customerName;
	const email = blank(input.customerEmail);
	const phone = blank(input.customerPhone);
	const existing = email
		? db
				.select({ id: table.customers.id })
				.from(table.customers)
				.where(sql`lower(${table.customers.email}) = ${email}`)
				.get()
		: db
				.select({ id: table.customers.id })
				.from(table.customers)
				.where(
					and(
						sql`${table.customers.name} = ${name} COLLATE NOCASE`,
						phone ? eq(table.customers.phone, phone) : isNull(table.customers.phone)
					)
				)
				.get();
	if (existing) return existing.id;
	return db
		.insert(table.customers)
		.values({ name, email, phone, createdAt: new Date() })
		.returning({ id: table.customers.id })
		.get().id;
}

/** Take a unit in: the job starts as `received`, with its first history row. */
export function createJob(db: Db, input: JobIntake, userId: string): JobDetail {
	const data = validate(jobIntakeSchema, input);
	const technicianId = blank(data.technicianId);
	const id = db.transaction((tx) => {
		checkTechnician(tx, technicianId);
		const customerId = resolveCustomer(tx, data);
		const now = new Date();
		const job = tx
			.insert(table.jobs)
			.values({
				customerId,
				category: data.category,
				make: data.make,
				model: data.model,
				serial: blank(data.serial),
				year: data.year ?? null,
				complaint: data.complaint,
				ratedPowerW: data.ratedPowerW ?? null,
				ratedLoadOhms: data.ratedLoadOhms ?? null,
				ratedPowerBasis: data.ratedPowerBasis ?? null,
				ratedThdPercent: data.ratedThdPercent ?? null,
				unrestored: data.unrestored ?? false,
				status: 'received',
				technicianId,
				promisedDate: blank(data.promisedDate),
				createdAt: now,
				updatedAt: now
			})
			.returning({ id: table.jobs.id })
			.get();
		tx.insert(table.jobStatusHistory)
			.values({
				jobId: job.id,
				userId,
				fromStatus: null,
				toStatus: 'received',
				note: 'Taken in',
				createdAt: now
			})
			.run();
		audit(tx, {
			actorId: userId,
			action: 'job.created',
			jobId: job.id,
			subject: `job #${job.id}`,
			detail: { make: data.make, model: data.model, customerId },
			at: now
		});
		return job.id;
	});
	return getJob(db, id)!;
}

/** Edit unit details, complaint, assignment or promised date (not the status). */
export function updateJob(db: Db, id: number, patch: JobPatch, actorId: string | null = null): JobDetail {
	const data = validate(jobPatchSchema, patch);
	db.transaction((tx) => {
		const before = assertJobOpen(tx, id);
		const changes: Partial<typeof table.jobs.$inferInsert> = { updatedAt: new Date() };
		if (data.category !== undefined) changes.category = data.category;
		if (data.make !== undefined) changes.make = data.make;
		if (data.model !== undefined) changes.model = data.model;
		if (data.serial !== undefined) changes.serial = blank(data.serial);
		if (data.year !== undefined) changes.year = data.year;
		if (data.complaint !== undefined) changes.complaint = data.complaint;
		if (data.ratedPowerW !== undefined) changes.ratedPowerW = data.ratedPowerW;
		if (data.ratedLoadOhms !== undefined) changes.ratedLoadOhms = data.ratedLoadOhms;
		if (data.ratedPowerBasis !== undefined) changes.ratedPowerBasis = data.ratedPowerBasis;
		if (data.ratedThdPercent !== undefined) changes.ratedThdPercent = data.ratedThdPercent;
		if (data.unrestored !== undefined) changes.unrestored = data.unrestored;
		if (data.promisedDate !== undefined) changes.promisedDate = blank(data.promisedDate);
		if (data.technicianId !== undefined) {
			changes.technicianId = blank(data.technicianId);
			checkTechnician(tx, changes.technicianId);
		}
		tx.update(table.jobs).set(changes).where(eq(table.jobs.id, id)).run();
		const edited = { ...changes };
		delete edited.updatedAt;
		const changed = diff(before, edited);
		if (Object.keys(changed).length)
			audit(tx, { actorId, action: 'job.updated', jobId: id, subject: `job #${id}`, detail: changed });
	});
	return getJob(db, id)!;
}

// ── status ──────────────────────────────────────────────────────────────────

/** Why the status route will not approve: a signature with the password does. */
export const SIGN_OFF_IS_THE_WAY =
	'A job is signed off, not moved to approved: open “Review and sign off” (POST /api/jobs/{id}/sign-off) and sign with your password';

/**
 * Move a job to another status. 403 when the role may not enter it (approval), 409 when
 * the move is not allowed from the current status, when it is `approved` (only a sign-off
 * approves), or the job is signed off (an approved job may only be returned; anything else
 * needs `reopenJob`). The job, its history row and the audit entry are written in one
 * transaction.
 */
export function changeStatus(db: Db, id: number, input: StatusChange, actor: Actor): JobDetail {
	const data = validate(statusChangeSchema, input);
	db.transaction((tx) => {
		const job = tx.select({ status: table.jobs.status }).from(table.jobs).where(eq(table.jobs.id, id)).get();
		if (!job) throw new DomainError('not-found', 'No such job');
		if (isLockedStatus(job.status) && !LOCKED_MOVES[job.status]?.includes(data.status))
			throw new DomainError('conflict', JOB_LOCKED_MESSAGE);
		if (!roleMayEnter(data.status, actor.role))
			throw new DomainError('forbidden', 'Only a supervisor or admin may sign a job off');
		if (data.status === 'approved') throw new DomainError('conflict', SIGN_OFF_IS_THE_WAY);
		if (isSystemMove(job.status, data.status)) throw new DomainError('conflict', SYSTEM_MOVE_MESSAGE);
		if (!nextStatuses(job.status).includes(data.status)) {
			throw new DomainError('conflict', `A job cannot move from ${job.status} to ${data.status}`);
		}
		recordStatusChange(tx, id, {
			from: job.status,
			to: data.status,
			actorId: actor.id,
			note: blank(data.note)
		});
	});
	return getJob(db, id)!;
}

// ── work log ────────────────────────────────────────────────────────────────

export function addLogEntry(db: Db, jobId: number, input: LogEntryInput, authorId: string): WorkLogItem {
	const data = validate(logEntrySchema, input);
	return db.transaction((tx) => {
		assertJobOpen(tx, jobId);
		const now = new Date();
		const entry = tx
			.insert(table.workLog)
			.values({
				jobId,
				authorId,
				text: data.text,
				minutes: data.minutes,
				forCustomer: data.forCustomer,
				createdAt: now
			})
			.returning()
			.get();
		tx.update(table.jobs).set({ updatedAt: now }).where(eq(table.jobs.id, jobId)).run();
		audit(tx, {
			actorId: authorId,
			action: 'log.added',
			jobId,
			subject: `job #${jobId}`,
			detail: { entryId: entry.id, text: data.text, minutes: data.minutes, forCustomer: data.forCustomer },
			at: now
		});
		const author = tx
			.select({ name: table.users.name })
			.from(table.users)
			.where(eq(table.users.id, authorId))
			.get();
		return {
			id: entry.id,
			text: entry.text,
			minutes: entry.minutes,
			authorId,
			authorName: author?.name ?? '',
			forCustomer: entry.forCustomer,
			createdAt: iso(entry.createdAt)
		};
	});
}

// ── parts ───────────────────────────────────────────────────────────────────

export function addPart(db: Db, jobId: number, input: PartInput, actorId: string | null = null): PartItem {
	const data = validate(partSchema, input);
	return db.transaction((tx) => {
		assertJobOpen(tx, jobId);
		const now = new Date();
		const part = tx
			.insert(table.parts)
			.values({
				jobId,
				refDes: data.refDes,
				description: data.description,
				value: blank(data.value),
				quantity: data.quantity,
				unitCostCents: data.unitCostCents,
				supplier: blank(data.supplier),
				state: data.state,
				verificationNote: blank(data.verificationNote),
				createdAt: now,
				updatedAt: now
			})
			.returning()
			.get();
		touchJob(tx, jobId, now);
		const item = toPartItem(part);
		audit(tx, {
			actorId,
			action: 'part.added',
			jobId,
			subject: `part ${part.refDes} on job #${jobId}`,
			detail: partFacts(item),
			at: now
		});
		return item;
	});
}

/** The facts of a part worth keeping in the trail. */
function partFacts(p: PartItem) {
	return {
		partId: p.id,
		refDes: p.refDes,
		description: p.description,
		value: p.value,
		quantity: p.quantity,
		unitCostCents: p.unitCostCents,
		state: p.state
	};
}

/** A part of an open job (404 for another job's part, 409 when the job is signed off). */
function requirePart(db: Conn, jobId: number, partId: number): table.Part {
	assertJobOpen(db, jobId);
	const part = db
		.select()
		.from(table.parts)
		.where(and(eq(table.parts.id, partId), eq(table.parts.jobId, jobId)))
		.get();
	if (!part) throw new DomainError('not-found', 'No such part on this job');
	return part;
}

export function updatePart(
	db: Db,
	jobId: number,
	partId: number,
	patch: PartPatch,
	actorId: string | null = null
): PartItem {
	const data = validate(partPatchSchema, patch);
	return db.transaction((tx) => {
		const before = requirePart(tx, jobId, partId);
		const now = new Date();
		const changes: Partial<typeof table.parts.$inferInsert> = { updatedAt: now };
		if (data.refDes !== undefined) changes.refDes = data.refDes;
		if (data.description !== undefined) changes.description = data.description;
		if (data.value !== undefined) changes.value = blank(data.value);
		if (data.quantity !== undefined) changes.quantity = data.quantity;
		if (data.unitCostCents !== undefined) changes.unitCostCents = data.unitCostCents;
		if (data.supplier !== undefined) changes.supplier = blank(data.supplier);
		if (data.state !== undefined) changes.state = data.state;
		if (data.verificationNote !== undefined) changes.verificationNote = blank(data.verificationNote);
		const part = tx.update(table.parts).set(changes).where(eq(table.parts.id, partId)).returning().get();
		touchJob(tx, jobId, now);
		const edited = { ...changes };
		delete edited.updatedAt;
		audit(tx, {
			actorId,
			action: 'part.updated',
			jobId,
			subject: `part ${part.refDes} on job #${jobId}`,
			detail: { partId, ...diff(before, edited) },
			at: now
		});
		return toPartItem(part);
	});
}

export function deletePart(db: Db, jobId: number, partId: number, actorId: string | null = null): void {
	db.transaction((tx) => {
		const part = requirePart(tx, jobId, partId);
		tx.delete(table.parts).where(eq(table.parts.id, partId)).run();
		touchJob(tx, jobId);
		audit(tx, {
			actorId,
			action: 'part.removed',
			jobId,
			subject: `part ${part.refDes} on job #${jobId}`,
			detail: partFacts(toPartItem(part))
		});
	});
}

/** Whether a job exists (for routes of other areas that hang off a job). */
export function jobExists(db: Db, id: number): boolean {
	return !!db.select({ id: table.jobs.id }).from(table.jobs).where(eq(table.jobs.id, id)).get();
}
