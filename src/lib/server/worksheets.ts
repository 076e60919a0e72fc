// A job's bench worksheets: read and saved whole, validated on write and on read, each save a new
// version (optimistic check: a stale edit is refused with 409), kept in an immutable history and
// written to the audit trail. Also the bench gate for a long-stored unit (soak, capture) and the
// safety-check evidence the sign-off judges.
// Relative imports only: the seed runs this under tsx without `$lib`.
import { and, desc, eq } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import { DomainError } from './errors';
import { validate } from './validate';
import { audit, type AuditConn } from './audit';
import { assertJobOpen, jobExists } from './jobs';
import { getSetting } from './settings';
import {
	WORKSHEET_KIND_LABELS,
	WORKSHEET_KINDS,
	WORKSHEET_SCHEMAS,
	worksheetPutSchema,
	type WorksheetData,
	type WorksheetKind
} from '../schemas/worksheets';
import {
	benchGate,
	safetyStatus,
	summarizeWorksheets,
	type Sheets,
	type WorksheetSummary
} from '../worksheets';

type Conn = AuditConn;

export interface WorksheetView<K extends WorksheetKind = WorksheetKind> {
	jobId: number;
	kind: K;
	/** Null until the sheet is first saved. */
	data: WorksheetData[K] | null;
	/** 0 until the sheet is first saved; send it back with the next PUT. */
	version: number;
	updatedAt: string | null;
	updatedByName: string | null;
}

export interface WorksheetVersionView {
	version: number;
	savedAt: string;
	savedByName: string | null;
}

/** How many saved versions a sheet's history shows (newest first). */
export const WORKSHEET_HISTORY_MAX = 20;

function parseStored<K extends WorksheetKind>(kind: K, raw: unknown): WorksheetData[K] | null {
	// A stored sheet that no longer validates reads as absent: the gates then stay shut.
	const parsed = WORKSHEET_SCHEMAS[kind].safeParse(raw);
	return parsed.success ? (parsed.data as WorksheetData[K]) : null;
}

function rows(db: Conn, jobId: number) {
	return db
		.select({ w: table.jobWorksheets, name: table.users.name })
		.from(table.jobWorksheets)
		.leftJoin(table.users, eq(table.users.id, table.jobWorksheets.updatedBy))
		.where(eq(table.jobWorksheets.jobId, jobId))
		.all();
}

function requireJob(db: Db, jobId: number): void {
	if (!jobExists(db, jobId)) throw new DomainError('not-found', 'No such job');
}

/** Every sheet of the job, parsed (null where none, or where the stored one no longer validates). */
export function readSheets(db: Conn, jobId: number): { sheets: Sheets; views: WorksheetView[] } {
	const sheets: Sheets = { intake: null, 'power-up': null, bias: null, safety: null };
	const views: WorksheetView[] = [];
	const found = new Map(rows(db, jobId).map((r) => [r.w.kind, r]));
	for (const kind of WORKSHEET_KINDS) {
		const r = found.get(kind);
		const data = r ? parseStored(kind, r.w.data) : null;
		(sheets as Record<WorksheetKind, unknown>)[kind] = data;
		views.push({
			jobId,
			kind,
			data,
			version: r?.w.version ?? 0,
			updatedAt: r ? r.w.updatedAt.toISOString() : null,
			updatedByName: r?.name ?? null
		});
	}
	return { sheets, views };
}

/** One sheet as the API answers it; 404 when there is no such job. */
export function getWorksheet<K extends WorksheetKind>(db: Db, jobId: number, kind: K): WorksheetView<K> {
	requireJob(db, jobId);
	return readSheets(db, jobId).views.find((v) => v.kind === kind) as WorksheetView<K>;
}

/** The sheet's saved versions, newest first (bounded). */
export function worksheetHistory(db: Db, jobId: number, kind: WorksheetKind): WorksheetVersionView[] {
	return db
		.select({ v: table.jobWorksheetVersions, name: table.users.name })
		.from(table.jobWorksheetVersions)
		.leftJoin(table.users, eq(table.users.id, table.jobWorksheetVersions.savedBy))
		.where(and(eq(table.jobWorksheetVersions.jobId, jobId), eq(table.jobWorksheetVersions.kind, kind)))
		.orderBy(desc(table.jobWorksheetVersions.version))
		.limit(WORKSHEET_HISTORY_MAX)
		.all()
		.map(({ v, name }) => ({ version: v.version, savedAt: v.savedAt.toISOString(), savedByName: name }));
}

/**
 * Save a whole sheet. 400 bad body or sheet (every problem at once); 404 no job; 409 the job is
 * signed off, or `version` is not the stored one (someone saved in between). The sheet, its
 * history row and the audit entry commit together.
 */
export function saveWorksheet<K extends WorksheetKind>(
	db: Db,
	jobId: number,
	kind: K,
	body: unknown,
	actorId: string | null,
	now = new Date()
): WorksheetView<K> {
	const { version } = validate(worksheetPutSchema, body, 'Invalid worksheet');
	const data = validate(
		WORKSHEET_SCHEMAS[kind],
		(body as { data?: unknown }).data,
		`Invalid ${WORKSHEET_KIND_LABELS[kind].toLowerCase()} sheet`
	) as WorksheetData[K];
	db.transaction((tx) => {
		assertJobOpen(tx, jobId);
		const current = tx
			.select({
				version: table.jobWorksheets.version,
				at: table.jobWorksheets.updatedAt,
				name: table.users.name
			})
			.from(table.jobWorksheets)
			.leftJoin(table.users, eq(table.users.id, table.jobWorksheets.updatedBy))
			.where(and(eq(table.jobWorksheets.jobId, jobId), eq(table.jobWorksheets.kind, kind)))
			.get();
		const stored = current?.version ?? 0;
		if (version !== stored)
			throw new DomainError(
				'conflict',
				current
					? `The ${WORKSHEET_KIND_LABELS[kind].toLowerCase()} sheet was saved by ${current.name ?? 'someone else'} at ${current.at.toISOString()} (version ${stored}; you edited version ${version}): reload it and make your change again`
					: `There is no saved ${WORKSHEET_KIND_LABELS[kind].toLowerCase()} sheet yet: send version 0`,
				[{ path: 'version', message: `The stored version is ${stored}` }]
			);
		const next = stored + 1;
		if (current)
			tx.update(table.jobWorksheets)
				.set({ data, version: next, updatedBy: actorId, updatedAt: now })
				.where(and(eq(table.jobWorksheets.jobId, jobId), eq(table.jobWorksheets.kind, kind)))
				.run();
		else
			tx.insert(table.jobWorksheets)
				.values({ jobId, kind, data, version: next, updatedBy: actorId, updatedAt: now })
				.run();
		tx.insert(table.jobWorksheetVersions)
			.values({ jobId, kind, version: next, data, savedBy: actorId, savedAt: now })
			.run();
		audit(tx, {
			actorId,
			action: current ? 'worksheet.updated' : 'worksheet.created',
			jobId,
			subject: `${WORKSHEET_KIND_LABELS[kind]} on job #${jobId}`,
			detail: { kind, version: next },
			at: now
		});
	});
	return getWorksheet(db, jobId, kind);
}

/** Every worksheet of the job judged (for the job page, compare, review and the sign-off). */
export function worksheetSummary(db: Db, jobId: number): WorksheetSummary {
	const { sheets, views } = readSheets(db, jobId);
	const meta = Object.fromEntries(
		views
			.filter((v) => v.updatedAt !== null)
			.map((v) => [v.kind, { updatedAt: v.updatedAt!, updatedByName: v.updatedByName, version: v.version }])
	);
	return summarizeWorksheets(jobId, sheets, meta, getSetting(db, 'worksheets'));
}

/**
 * Refuse work that puts full mains and drive on the unit (a soak, a capture) while it is marked
 * stored-for-years and its first power-up is not complete: 409 saying what is still to do.
 */
export function assertBenchPowerAllowed(db: Db, jobId: number, what: string): void {
	const { sheets } = readSheets(db, jobId);
	const gate = benchGate(sheets.intake, sheets['power-up'], getSetting(db, 'worksheets'));
	if (gate.blocked) throw new DomainError('conflict', `No ${what} yet. ${gate.reason}`);
}

/** The safety check as the sign-off judges it. */
export function safetyEvidence(db: Conn, jobId: number) {
	return safetyStatus(readSheets(db, jobId).sheets.safety);
}
