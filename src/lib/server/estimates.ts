// Estimates: a technician drafts, a supervisor sends, the customer approves or declines from
// their private link. Sending freezes the version (lines, the shop's pricing that day, and the
// exact document the customer is shown with its SHA-256); a revision is a new version. The
// customer's decision moves the job out of "Awaiting customer approval" and mails the shop.
import { and, desc, eq, inArray, max } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import { DomainError } from './errors';
import { audit } from './audit';
import { validateListing as validate } from './validate';
import { assertJobOpen, getJob, recordStatusChange } from './jobs';
import { getSettings } from './settings';
import {
	createCustomerLink,
	customerEmailOrRefuse,
	customerLinkUrl,
	resolveCustomerLink,
	revokeCustomerLink
} from './customer-links';
import { escapeHtml, sendMail, type OutgoingMail } from './mail';
import {
	buildSeenEstimate,
	estimateFingerprint,
	seenHashMatches,
	type EstimateLineInput,
	type EstimatePricing,
	type SeenEstimate
} from './estimate-hash';
import { canonicalJson } from './sign-off-hash';
import { formatMoney } from '$lib/money';
import {
	estimateDecisionSchema,
	estimateDraftSchema,
	type EstimateDecisionInput,
	type EstimateDraftInput
} from '$lib/schemas/estimates';
import { JOB_STATUSES, type JobStatus, type Role } from '$lib/schemas/enums';
import { nextStatuses } from '$lib/schemas/jobs';

type Actor = { id: string; role: Role };
type Send = (m: OutgoingMail) => Promise<{ messageId: string }>;

/** Statuses a job may be in when an estimate (or a revision) goes to the customer. */
export const ESTIMATE_SENDABLE_FROM: readonly JobStatus[] = JOB_STATUSES.filter(
	(s) => s === 'awaiting-approval' || nextStatuses(s).includes('awaiting-approval')
);

export interface EstimateView {
	id: number;
	jobId: number;
	version: number;
	status: table.Estimate['status'];
	note: string | null;
	/** The priced document: frozen as sent, or priced with today's settings while a draft. */
	document: SeenEstimate;
	/** The drafted lines (for editing a draft). */
	lines: EstimateLineInput[];
	sha256: string | null;
	createdByName: string;
	createdAt: string;
	updatedAt: string;
	sentByName: string | null;
	sentAt: string | null;
	decision: {
		decision: 'approve' | 'decline';
		typedName: string;
		reason: string | null;
		seenSha256: string;
		decidedAt: string;
	} | null;
}

/** The shop's pricing settings as an estimate uses them. */
export function currentPricing(db: Db): EstimatePricing {
	const m = getSettings(db).money;
	return { ...m, deposit: { ...m.deposit } };
}

function documentOf(row: table.Estimate, pricing: EstimatePricing): SeenEstimate {
	if (row.seenJson) return JSON.parse(row.seenJson) as SeenEstimate;
	return buildSeenEstimate(
		{ estimateId: row.id, jobId: row.jobId, version: row.version },
		row.lines as EstimateLineInput[],
		pricing
	);
}

/** Every version of the job's estimate, newest first (at most 50), with the customer's decisions. */
export function listEstimates(db: Db, jobId: number): EstimateView[] {
	const rows = db
		.select()
		.from(table.estimates)
		.where(eq(table.estimates.jobId, jobId))
		.orderBy(desc(table.estimates.version))
		.limit(50)
		.all();
	if (rows.length === 0) return [];
	const pricing = currentPricing(db);
	const ids = rows.map((r) => r.id);
	const decisions = new Map(
		db
			.select()
			.from(table.estimateDecisions)
			.where(inArray(table.estimateDecisions.estimateId, ids))
			.all()
			.map((d) => [d.estimateId, d])
	);
	const userIds = [...new Set(rows.flatMap((r) => [r.createdBy, r.sentBy]).filter((u): u is string => !!u))];
	const names = new Map(
		db
			.select({ id: table.users.id, name: table.users.name })
			.from(table.users)
			.where(inArray(table.users.id, userIds))
			.all()
			.map((u) => [u.id, u.name])
	);
	return rows.map((r) => {
		const d = decisions.get(r.id);
		return {
			id: r.id,
			jobId: r.jobId,
			version: r.version,
			status: r.status,
			note: r.note,
			document: documentOf(r, pricing),
			lines: r.lines as EstimateLineInput[],
			sha256: r.seenSha256,
			createdByName: names.get(r.createdBy) ?? '',
			createdAt: r.createdAt.toISOString(),
			updatedAt: r.updatedAt.toISOString(),
			sentByName: r.sentBy ? (names.get(r.sentBy) ?? '') : null,
			sentAt: r.sentAt?.toISOString() ?? null,
			decision: d
				? {
						decision: d.decision,
						typedName: d.typedName,
						reason: d.reason,
						seenSha256: d.seenSha256,
						decidedAt: d.decidedAt.toISOString()
					}
				: null
		};
	});
}

/** The latest version the customer approved: what an invoice is made from. */
export function latestApprovedEstimate(db: Db, jobId: number): table.Estimate | null {
	return (
		db
			.select()
			.from(table.estimates)
			.where(and(eq(table.estimates.jobId, jobId), eq(table.estimates.status, 'approved')))
			.orderBy(desc(table.estimates.version))
			.limit(1)
			.get() ?? null
	);
}

/**
 * Save the job's draft: the open draft is edited in place; with none, a new version starts
 * (a revision of what was sent). 409 on a signed-off job.
 */
export function saveEstimateDraft(
	db: Db,
	jobId: number,
	input: EstimateDraftInput,
	actor: Actor,
	nowMs = Date.now()
): EstimateView {
	const data = validate(estimateDraftSchema, input);
	const parts = new Map(
		db
			.select({ id: table.parts.id })
			.from(table.parts)
			.where(eq(table.parts.jobId, jobId))
			.all()
			.map((p) => [p.id, p])
	);
	const bad = data.lines.flatMap((l, i) =>
		l.kind === 'part' && l.partId !== null && !parts.has(l.partId)
			? [{ path: `lines.${i}.partId`, message: `Part #${l.partId} is not on this job's parts list` }]
			: []
	);
	if (bad.length) throw new DomainError('invalid', bad.map((b) => b.message).join('; '), bad);
	const now = new Date(nowMs);
	db.transaction((tx) => {
		assertJobOpen(tx, jobId);
		const draft = tx
			.select({ id: table.estimates.id, version: table.estimates.version })
			.from(table.estimates)
			.where(and(eq(table.estimates.jobId, jobId), eq(table.estimates.status, 'draft')))
			.get();
		if (draft) {
			tx.update(table.estimates)
				.set({ lines: data.lines, note: data.note ?? null, updatedAt: now })
				.where(eq(table.estimates.id, draft.id))
				.run();
		} else {
			const top = tx
				.select({ v: max(table.estimates.version) })
				.from(table.estimates)
				.where(eq(table.estimates.jobId, jobId))
				.get();
			const version = (top?.v ?? 0) + 1;
			tx.insert(table.estimates)
				.values({
					jobId,
					version,
					status: 'draft',
					lines: data.lines,
					note: data.note ?? null,
					createdBy: actor.id,
					createdAt: now,
					updatedAt: now
				})
				.run();
			audit(tx, {
				actorId: actor.id,
				action: 'estimate.drafted',
				jobId,
				subject: `estimate v${version} of job #${jobId}`,
				detail: { version, lines: data.lines.length },
				at: now
			});
		}
	});
	return listEstimates(db, jobId).find((e) => e.status === 'draft')!;
}

export interface EstimateSendResult {
	to: string;
	messageId: string;
	url: string;
	version: number;
	sha256: string;
}

/**
 * A supervisor sends the draft: the customer gets an e-mail with a private link (purpose
 * `estimate`), the version is frozen with its fingerprint, an unanswered earlier version is
 * superseded, and the job waits for the customer. A failed e-mail changes nothing.
 */
export async function sendEstimate(
	db: Db,
	estimateId: number,
	actor: Actor,
	opts: { origin: string; send?: Send; nowMs?: number }
): Promise<EstimateSendResult> {
	if (actor.role !== 'supervisor' && actor.role !== 'admin')
		throw new DomainError('forbidden', 'Only a supervisor or admin sends an estimate to the customer');
	const nowMs = opts.nowMs ?? Date.now();
	const row = db.select().from(table.estimates).where(eq(table.estimates.id, estimateId)).get();
	if (!row) throw new DomainError('not-found', 'No such estimate');
	if (row.status !== 'draft')
		throw new DomainError(
			'conflict',
			`Version ${row.version} was already sent (${row.status}); draft a revision to send changes`
		);
	const job = getJob(db, row.jobId);
	if (!job) throw new DomainError('not-found', 'No such job');
	assertJobOpen(db, row.jobId);
	if (!ESTIMATE_SENDABLE_FROM.includes(job.status))
		throw new DomainError(
			'conflict',
			`An estimate is sent while the unit is in the shop before review; this job is ${job.status} (allowed: ${ESTIMATE_SENDABLE_FROM.join(', ')})`
		);
	const to = customerEmailOrRefuse(job.customer);
	const settings = getSettings(db);
	const pricing = currentPricing(db);
	const seen = buildSeenEstimate(
		{ estimateId: row.id, jobId: row.jobId, version: row.version },
		row.lines as EstimateLineInput[],
		pricing
	);
	const { canonical, sha256 } = estimateFingerprint(seen);

	const link = createCustomerLink(
		db,
		{
			jobId: row.jobId,
			purpose: 'estimate',
			createdBy: actor.id,
			lifetimeDays: settings.customerReport.linkLifetimeDays
		},
		nowMs
	);
	const url = customerLinkUrl(opts.origin, 'estimate', link.token);
	const unit = `${job.make} ${job.model}`;
	const total = formatMoney(seen.totals.grossMinor, seen.currency);
	const deposit = seen.depositMinor > 0 ? formatMoney(seen.depositMinor, seen.currency) : null;
	const lines = [
		`Hello ${job.customer.name},`,
		'',
		`here is our estimate for your ${unit} (version ${row.version}): ${total} including tax.`,
		deposit ? `A deposit of ${deposit} is payable when you approve it.` : '',
		'',
		`Read it, and approve or decline it, here (until ${link.expiresAt.toISOString().slice(0, 10)}):`,
		url,
		'',
		'We start the work only after you approve.',
		'',
		settings.shopName
	].filter((l, i, a) => l !== '' || a[i - 1] !== '');
	let messageId: string;
	try {
		({ messageId } = await (opts.send ?? sendMail)({
			to,
			subject: `Estimate for your ${unit} (job ${row.jobId}, version ${row.version})`,
			text: lines.join('\n'),
			html: `<p>Hello ${escapeHtml(job.customer.name)},</p><p>here is our estimate for your ${escapeHtml(unit)} (version ${row.version}): <strong>${escapeHtml(total)}</strong> including tax.${deposit ? ` A deposit of ${escapeHtml(deposit)} is payable when you approve it.` : ''}</p><p><a href="${escapeHtml(url)}">Read, approve or decline the estimate</a></p><p>We start the work only after you approve.</p><p>${escapeHtml(settings.shopName)}</p>`
		}));
	} catch (e) {
		revokeCustomerLink(db, row.jobId, link.id, actor.id, nowMs);
		throw new DomainError(
			'busy',
			`The mail server did not take the message (${e instanceof Error ? e.message : String(e)}). Nothing was sent; try again.`
		);
	}
	const now = new Date(nowMs);
	db.transaction((tx) => {
		const fresh = tx.select().from(table.estimates).where(eq(table.estimates.id, estimateId)).get();
		if (!fresh || fresh.status !== 'draft' || canonicalJson(fresh.lines) !== canonicalJson(row.lines))
			throw new DomainError('conflict', 'The draft changed while it was being sent; check it and send again');
		tx.update(table.estimates)
			.set({ status: 'superseded' })
			.where(and(eq(table.estimates.jobId, row.jobId), eq(table.estimates.status, 'sent')))
			.run();
		tx.update(table.estimates)
			.set({
				status: 'sent',
				pricing,
				seenJson: canonical,
				seenSha256: sha256,
				sentBy: actor.id,
				sentAt: now,
				updatedAt: now
			})
			.where(eq(table.estimates.id, estimateId))
			.run();
		const current = tx
			.select({ status: table.jobs.status })
			.from(table.jobs)
			.where(eq(table.jobs.id, row.jobId))
			.get()!;
		if (current.status !== 'awaiting-approval')
			recordStatusChange(tx, row.jobId, {
				from: current.status,
				to: 'awaiting-approval',
				actorId: actor.id,
				note: `Estimate version ${row.version} sent to the customer`,
				at: now
			});
		audit(tx, {
			actorId: actor.id,
			action: 'estimate.sent',
			jobId: row.jobId,
			subject: `estimate v${row.version} of job #${row.jobId}`,
			detail: {
				to,
				messageId,
				linkId: link.id,
				sha256,
				grossMinor: seen.totals.grossMinor,
				currency: seen.currency
			},
			at: now
		});
	});
	return { to, messageId, url, version: row.version, sha256 };
}

/** The latest estimate the customer has been sent (never a draft), or null. */
function latestSent(db: Db, jobId: number): table.Estimate | null {
	return (
		db
			.select()
			.from(table.estimates)
			.where(
				and(
					eq(table.estimates.jobId, jobId),
					inArray(table.estimates.status, ['sent', 'approved', 'declined'])
				)
			)
			.orderBy(desc(table.estimates.version))
			.limit(1)
			.get() ?? null
	);
}

export interface CustomerEstimatePage {
	linkId: number;
	jobId: number;
	shopName: string;
	shopContact: string;
	customerName: string;
	unit: string;
	jobStatus: JobStatus;
	estimate: {
		id: number;
		version: number;
		status: table.Estimate['status'];
		note: string | null;
		document: SeenEstimate;
		sha256: string;
		sentAt: string;
	} | null;
	decision: EstimateView['decision'];
	/** True when the customer may answer now. */
	awaitingDecision: boolean;
}

/** What the customer's estimate link shows, or null for an unknown, expired or revoked link. */
export function customerEstimatePage(db: Db, token: string, nowMs = Date.now()): CustomerEstimatePage | null {
	const link = resolveCustomerLink(db, token, 'estimate', nowMs);
	if (!link) return null;
	const job = getJob(db, link.jobId);
	if (!job) return null;
	const settings = getSettings(db);
	const row = latestSent(db, link.jobId);
	const decision = row
		? (db
				.select()
				.from(table.estimateDecisions)
				.where(eq(table.estimateDecisions.estimateId, row.id))
				.get() ?? null)
		: null;
	return {
		linkId: link.id,
		jobId: link.jobId,
		shopName: settings.shopName,
		shopContact: [settings.customerReport.phone, settings.customerReport.email].filter(Boolean).join(' · '),
		customerName: job.customer.name,
		unit: `${job.make} ${job.model}`,
		jobStatus: job.status,
		estimate: row
			? {
					id: row.id,
					version: row.version,
					status: row.status,
					note: row.note,
					document: JSON.parse(row.seenJson!) as SeenEstimate,
					sha256: row.seenSha256!,
					sentAt: row.sentAt!.toISOString()
				}
			: null,
		decision: decision
			? {
					decision: decision.decision,
					typedName: decision.typedName,
					reason: decision.reason,
					seenSha256: decision.seenSha256,
					decidedAt: decision.decidedAt.toISOString()
				}
			: null,
		awaitingDecision: !!row && row.status === 'sent' && job.status === 'awaiting-approval'
	};
}

/**
 * The customer approves (typed name, consent) or declines (reason) from their link. The page's
 * fingerprint must match the estimate as stored: nobody approves figures they were not shown.
 * The job moves to repairing or declined; the shop is told by e-mail (a failed e-mail is logged,
 * the decision stands).
 */
export async function decideEstimate(
	db: Db,
	token: string,
	input: EstimateDecisionInput,
	opts: { send?: Send; nowMs?: number } = {}
): Promise<{ decision: 'approve' | 'decline'; jobId: number; version: number }> {
	const nowMs = opts.nowMs ?? Date.now();
	const page = customerEstimatePage(db, token, nowMs);
	if (!page) throw new DomainError('not-found', 'Not found');
	const data = validate(estimateDecisionSchema, input);
	if (!page.estimate) throw new DomainError('conflict', 'There is no estimate on this link yet');
	if (page.decision)
		throw new DomainError(
			'conflict',
			`You already ${page.decision.decision === 'approve' ? 'approved' : 'declined'} this estimate`
		);
	if (!page.awaitingDecision)
		throw new DomainError('conflict', 'The shop has withdrawn this estimate for now; please contact them');
	const row = db.select().from(table.estimates).where(eq(table.estimates.id, page.estimate.id)).get()!;
	const seen = JSON.parse(row.seenJson!) as SeenEstimate;
	if (row.seenSha256 !== data.seenSha256 || !seenHashMatches(seen, data.seenSha256))
		throw new DomainError(
			'conflict',
			'The estimate changed since this page was opened; reload the page to read the current one before answering',
			[{ path: 'seenSha256', message: 'does not match the estimate on record' }]
		);
	const now = new Date(nowMs);
	const typedName = data.typedName?.trim() || page.customerName;
	db.transaction((tx) => {
		tx.insert(table.estimateDecisions)
			.values({
				estimateId: row.id,
				linkId: page.linkId,
				decision: data.decision,
				typedName,
				reason: data.decision === 'decline' ? data.reason : null,
				seenSha256: data.seenSha256,
				decidedAt: now
			})
			.run();
		tx.update(table.estimates)
			.set({ status: data.decision === 'approve' ? 'approved' : 'declined', updatedAt: now })
			.where(eq(table.estimates.id, row.id))
			.run();
		recordStatusChange(tx, row.jobId, {
			from: 'awaiting-approval',
			to: data.decision === 'approve' ? 'repairing' : 'declined',
			actorId: null,
			note:
				data.decision === 'approve'
					? `Customer approved estimate version ${row.version} (typed name: ${typedName})`
					: `Customer declined estimate version ${row.version}: ${data.reason}`,
			at: now
		});
		audit(tx, {
			actorId: null,
			action: data.decision === 'approve' ? 'estimate.approved' : 'estimate.declined',
			jobId: row.jobId,
			subject: `estimate v${row.version} of job #${row.jobId}`,
			detail: {
				typedName,
				seenSha256: data.seenSha256,
				linkId: page.linkId,
				...(data.decision === 'decline' ? { reason: data.reason } : {})
			},
			at: now
		});
	});
	await notifyShop(db, opts.send ?? sendMail, {
		subject: `Job ${row.jobId}: estimate version ${row.version} ${data.decision === 'approve' ? 'approved' : 'declined'} by ${page.customerName}`,
		text: [
			`${page.customerName} ${data.decision === 'approve' ? 'approved' : 'declined'} estimate version ${row.version} for the ${page.unit} (job ${row.jobId}) at ${now.toISOString()}.`,
			data.decision === 'approve'
				? `Typed name: ${typedName}. Total ${formatMoney(seen.totals.grossMinor, seen.currency)}.`
				: `Reason: ${data.reason}`,
			`The job is now ${data.decision === 'approve' ? 'repairing' : 'declined'}.`
		].join('\n')
	});
	return { decision: data.decision, jobId: row.jobId, version: row.version };
}

/**
 * Mail the shop: its own address from Settings, or else every active supervisor and admin.
 * A failure is logged, never thrown: the customer's action has already been recorded.
 */
export async function notifyShop(db: Db, send: Send, mail: { subject: string; text: string }): Promise<void> {
	const shopEmail = getSettings(db).customerReport.email;
	const to = shopEmail
		? [shopEmail]
		: db
				.select({ email: table.users.email })
				.from(table.users)
				.where(and(eq(table.users.active, true), inArray(table.users.role, ['supervisor', 'admin'])))
				.limit(20)
				.all()
				.map((u) => u.email);
	if (to.length === 0) return;
	try {
		await send({ to: to.join(', '), subject: mail.subject, text: mail.text });
	} catch (e) {
		console.error(`shop notice not sent (${mail.subject}): ${e instanceof Error ? e.message : e}`);
	}
}
