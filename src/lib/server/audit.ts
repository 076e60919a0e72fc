// The audit trail: `audit()` appends one row in the caller's transaction (so the record and
// the action commit or roll back together), `listAudit()` pages through it with filters.
// The table refuses UPDATE and DELETE (triggers in the migration).
// Relative imports only: scripts run services under tsx without `$lib`.
import { and, count, desc, eq, gte, like, lt, type SQL } from 'drizzle-orm';
import type { BaseSQLiteDatabase } from 'drizzle-orm/sqlite-core';
import type { RunResult } from 'better-sqlite3';
import type { Db } from './db/open';
import * as table from './db/schema';
import { validate } from './validate';
import {
	AUDIT_ACTIONS,
	auditQuerySchema,
	type AuditAction,
	type AuditEntryView,
	type AuditPage,
	type AuditQuery
} from '../schemas/audit';

export { AUDIT_ACTIONS, type AuditAction };

/** The database or a transaction on it. */
export type AuditConn = BaseSQLiteDatabase<'sync', RunResult, typeof table>;

export interface AuditInput {
	/** Who acted; null for the system (seed, housekeeping). */
	actorId: string | null;
	action: AuditAction;
	jobId?: number | null;
	/** What was acted on, in words: "job #12", "part C12", "user Rowan Thistlewood". */
	subject: string;
	/** What changed (field → value, before/after), JSON-safe. */
	detail?: unknown;
	at?: Date;
}

/**
 * Append one entry. Call it with the transaction the action runs in: when the action rolls
 * back, so does its record, and an action never commits without one.
 */
export function audit(tx: AuditConn, input: AuditInput): void {
	tx.insert(table.auditLog)
		.values({
			at: input.at ?? new Date(),
			actorId: input.actorId,
			action: input.action,
			jobId: input.jobId ?? null,
			subject: input.subject,
			detail: input.detail === undefined ? null : input.detail
		})
		.run();
}

/** Fields that changed between two records, as `{ field: { from, to } }` (only the given keys). */
export function changes<T extends object>(
	before: T,
	after: Partial<T>
): Record<string, { from: unknown; to: unknown }> {
	const out: Record<string, { from: unknown; to: unknown }> = {};
	for (const key of Object.keys(after) as (keyof T)[]) {
		const a = before[key];
		const b = after[key];
		if (b === undefined) continue;
		const same =
			a instanceof Date && b instanceof Date
				? a.getTime() === b.getTime()
				: JSON.stringify(a) === JSON.stringify(b);
		if (!same) out[key as string] = { from: a ?? null, to: b ?? null };
	}
	return out;
}

const DAY_MS = 86_400_000;

function escapeLike(s: string): string {
	return s.replace(/[\\%_]/g, (c) => `\\${c}`);
}

/** One page of the trail, newest first. 400 for a bad query (every problem listed). */
export function listAudit(db: Db, query: Partial<AuditQuery>): AuditPage {
	const q = validate(auditQuerySchema, query);
	const where: SQL[] = [];
	if (q.actor) where.push(eq(table.auditLog.actorId, q.actor));
	if (q.action) {
		where.push(
			q.action.endsWith('.')
				? like(table.auditLog.action, `${escapeLike(q.action)}%`)
				: eq(table.auditLog.action, q.action)
		);
	}
	if (q.job !== undefined) where.push(eq(table.auditLog.jobId, q.job));
	if (q.from) where.push(gte(table.auditLog.at, new Date(`${q.from}T00:00:00Z`)));
	if (q.to) where.push(lt(table.auditLog.at, new Date(new Date(`${q.to}T00:00:00Z`).getTime() + DAY_MS)));
	const filter = where.length ? and(...where) : undefined;

	const total = db.select({ n: count() }).from(table.auditLog).where(filter).get()?.n ?? 0;
	const rows = db
		.select({
			id: table.auditLog.id,
			at: table.auditLog.at,
			actorId: table.auditLog.actorId,
			actorName: table.users.name,
			action: table.auditLog.action,
			jobId: table.auditLog.jobId,
			subject: table.auditLog.subject,
			detail: table.auditLog.detail
		})
		.from(table.auditLog)
		.leftJoin(table.users, eq(table.users.id, table.auditLog.actorId))
		.where(filter)
		.orderBy(desc(table.auditLog.at), desc(table.auditLog.id))
		.limit(q.pageSize)
		.offset((q.page - 1) * q.pageSize)
		.all();
	const items: AuditEntryView[] = rows.map((r) => ({ ...r, at: r.at.toISOString() }));
	return { items, total, page: q.page, pageSize: q.pageSize };
}
