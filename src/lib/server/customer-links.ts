// Private links a customer opens without an account: the report now, an estimate later. The
// token is 32 random bytes (base64url) shown once; only its SHA-256 is stored, so a copy of the
// database cannot open anyone's report. Unknown, expired and revoked links look the same: null.
import { createHash, randomBytes } from 'node:crypto';
import { and, desc, eq } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import { DomainError } from './errors';
import { audit } from './audit';

export type LinkPurpose = 'report' | 'estimate';

const DAY_MS = 86_400_000;
const TOKEN_RE = /^[A-Za-z0-9_-]{43}$/;

export const tokenSha256 = (token: string): string =>
	createHash('sha256').update(token, 'utf8').digest('hex');

export interface CustomerLinkView {
	id: number;
	jobId: number;
	purpose: LinkPurpose;
	createdAt: string;
	createdByName: string;
	expiresAt: string;
	revokedAt: string | null;
	views: number;
	lastViewedAt: string | null;
	/** Usable now: neither expired nor revoked. */
	live: boolean;
}

/** Make a link; the raw token comes back once and is never stored. */
export function createCustomerLink(
	db: Db,
	input: { jobId: number; purpose: LinkPurpose; createdBy: string; lifetimeDays: number },
	nowMs = Date.now()
): { id: number; token: string; expiresAt: Date } {
	if (!Number.isInteger(input.lifetimeDays) || input.lifetimeDays < 1 || input.lifetimeDays > 365)
		throw new DomainError('invalid', 'A link lives 1 to 365 days');
	const token = randomBytes(32).toString('base64url');
	const expiresAt = new Date(nowMs + input.lifetimeDays * DAY_MS);
	const id = db.transaction((tx) => {
		const row = tx
			.insert(table.customerLinks)
			.values({
				jobId: input.jobId,
				purpose: input.purpose,
				tokenSha256: tokenSha256(token),
				createdBy: input.createdBy,
				createdAt: new Date(nowMs),
				expiresAt
			})
			.returning({ id: table.customerLinks.id })
			.get();
		audit(tx, {
			actorId: input.createdBy,
			action: 'customer-link.created',
			jobId: input.jobId,
			subject: `link #${row.id}`,
			detail: { purpose: input.purpose, expiresAt: expiresAt.toISOString() },
			at: new Date(nowMs)
		});
		return row.id;
	});
	return { id, token, expiresAt };
}

/** The live link a token opens for this purpose, or null (unknown, malformed, expired or revoked). */
export function resolveCustomerLink(
	db: Db,
	token: string,
	purpose: LinkPurpose,
	nowMs = Date.now()
): { id: number; jobId: number } | null {
	if (!TOKEN_RE.test(token)) return null;
	const row = db
		.select()
		.from(table.customerLinks)
		.where(
			and(eq(table.customerLinks.tokenSha256, tokenSha256(token)), eq(table.customerLinks.purpose, purpose))
		)
		.get();
	if (!row || row.revokedAt !== null || row.expiresAt.getTime() <= nowMs) return null;
	return { id: row.id, jobId: row.jobId };
}

export function recordLinkView(db: Db, linkId: number, nowMs = Date.now()): void {
	db.insert(table.customerLinkViews)
		.values({ linkId, viewedAt: new Date(nowMs) })
		.run();
}

/** Revoke a link of this job; revoking twice is harmless. */
export function revokeCustomerLink(
	db: Db,
	jobId: number,
	linkId: number,
	actorId: string,
	nowMs = Date.now()
): void {
	db.transaction((tx) => {
		const row = tx
			.select()
			.from(table.customerLinks)
			.where(and(eq(table.customerLinks.id, linkId), eq(table.customerLinks.jobId, jobId)))
			.get();
		if (!row) throw new DomainError('not-found', 'No such link on this job');
		if (row.revokedAt !== null) return;
		tx.update(table.customerLinks)
			.set({ revokedAt: new Date(nowMs), revokedBy: actorId })
			.where(eq(table.customerLinks.id, linkId))
			.run();
		audit(tx, {
			actorId,
			action: 'customer-link.revoked',
			jobId,
			subject: `link #${linkId}`,
			detail: { purpose: row.purpose },
			at: new Date(nowMs)
		});
	});
}

/** A job's links, newest first (at most 50), with how often each was opened. */
export function listCustomerLinks(db: Db, jobId: number, nowMs = Date.now()): CustomerLinkView[] {
	const rows = db
		.select({ l: table.customerLinks, name: table.users.name })
		.from(table.customerLinks)
		.innerJoin(table.users, eq(table.users.id, table.customerLinks.createdBy))
		.where(eq(table.customerLinks.jobId, jobId))
		.orderBy(desc(table.customerLinks.createdAt), desc(table.customerLinks.id))
		.limit(50)
		.all();
	return rows.map(({ l, name }) => {
		const views = db
			.select({ at: table.customerLinkViews.viewedAt })
			.from(table.customerLinkViews)
			.where(eq(table.customerLinkViews.linkId, l.id))
			.orderBy(desc(table.customerLinkViews.viewedAt))
			.all();
		return {
			id: l.id,
			jobId: l.jobId,
			purpose: l.purpose,
			createdAt: l.createdAt.toISOString(),
			createdByName: name,
			expiresAt: l.expiresAt.toISOString(),
			revokedAt: l.revokedAt?.toISOString() ?? null,
			views: views.length,
			lastViewedAt: views[0]?.at.toISOString() ?? null,
			live: l.revokedAt === null && l.expiresAt.getTime() > nowMs
		};
	});
}

/** Where a customer's mail goes: their e-mail address, or a 400 saying to add one first. */
export function customerEmailOrRefuse(customer: { name: string; email: string | null }): string {
	if (!customer.email)
		throw new DomainError(
			'invalid',
			`${customer.name} has no e-mail address: add one to the customer first.`,
			[{ path: 'email', message: 'the customer needs an e-mail address' }]
		);
	return customer.email;
}

/** A link's address on the shop's origin: /r/ for a report, /e/ for an estimate. */
export function customerLinkUrl(origin: string, purpose: LinkPurpose, token: string): string {
	return `${origin.replace(/\/$/, '')}/${purpose === 'report' ? 'r' : 'e'}/${token}`;
}
