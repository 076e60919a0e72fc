// The invoice: issued by a supervisor once the job is signed off, from the customer's approved
// estimate (a revision the customer approved replaces the earlier one, so changes they agreed
// to are in it), with a gapless number per year taken inside the same transaction. The PDF is
// drawn with the report's PDF helpers; the report's e-mail carries it once issued.
import { eq } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import { DomainError } from './errors';
import { audit } from './audit';
import { getJob } from './jobs';
import { getSettings } from './settings';
import { latestApprovedEstimate } from './estimates';
import { moneySummary, type InvoiceDocument } from './payments';
import { nextInvoiceNumber } from './invoice-number';
import { canonicalJson } from './sign-off-hash';
import type { SeenEstimate } from './estimate-hash';
import { renderPdf } from './pdf-renderer';
import type { InvoicePdfModel } from './invoice-pdf';
import type { Role } from '$lib/schemas/enums';

/** Issue the job's invoice (once). 403 for technicians, 409 before sign-off or without an approved estimate. */
export function issueInvoice(db: Db, jobId: number, actor: { id: string; role: Role }, nowMs = Date.now()) {
	if (actor.role !== 'supervisor' && actor.role !== 'admin')
		throw new DomainError('forbidden', 'Only a supervisor or admin issues an invoice');
	const job = getJob(db, jobId);
	if (!job) throw new DomainError('not-found', 'No such job');
	if (job.status !== 'approved' && job.status !== 'returned')
		throw new DomainError(
			'conflict',
			`An invoice is issued when the job is signed off for return; this job is ${job.status}`
		);
	const estimate = latestApprovedEstimate(db, jobId);
	if (!estimate?.seenJson)
		throw new DomainError(
			'conflict',
			'The customer has not approved an estimate on this job, so there is nothing to invoice'
		);
	const seen = JSON.parse(estimate.seenJson) as SeenEstimate;
	const now = new Date(nowMs);
	return db.transaction((tx) => {
		const existing = tx.select().from(table.invoices).where(eq(table.invoices.jobId, jobId)).get();
		if (existing)
			throw new DomainError('conflict', `Invoice ${existing.number} was already issued for this job`);
		const number = nextInvoiceNumber(db.$client, now.getUTCFullYear()).label;
		const document: InvoiceDocument = {
			...seen,
			invoiceNumber: number,
			issuedAt: now.toISOString(),
			customerName: job.customer.name,
			unit: `${job.make} ${job.model}`
		};
		const row = tx
			.insert(table.invoices)
			.values({
				jobId,
				number,
				estimateId: estimate.id,
				documentJson: canonicalJson(document),
				issuedBy: actor.id,
				issuedAt: now
			})
			.returning()
			.get();
		audit(tx, {
			actorId: actor.id,
			action: 'invoice.issued',
			jobId,
			subject: `invoice ${number}`,
			detail: {
				number,
				estimateVersion: estimate.version,
				grossMinor: seen.totals.grossMinor,
				currency: seen.currency
			},
			at: now
		});
		return { id: row.id, number };
	});
}

/** What the invoice PDF shows, as plain data (drawn on the PDF worker, see pdf-renderer.ts). */
export function invoicePdfModel(db: Db, jobId: number): InvoicePdfModel | null {
	const row = db.select().from(table.invoices).where(eq(table.invoices.jobId, jobId)).get();
	if (!row) return null;
	const settings = getSettings(db);
	const money = moneySummary(db, jobId);
	const r = settings.customerReport;
	return {
		jobId,
		document: JSON.parse(row.documentJson) as InvoiceDocument,
		shop: { name: settings.shopName, address: r.address, phone: r.phone, email: r.email, footer: r.footer },
		receivedMinor: money.receivedMinor,
		payments: money.payments.map((p) => ({
			receivedAt: p.receivedAt,
			methodLabel: p.methodLabel,
			kind: p.kind,
			amountMinor: p.amountMinor
		}))
	};
}

/** The job's invoice as a PDF (drawn off the request thread), or null when none is issued. */
export async function renderInvoicePdf(
	db: Db,
	jobId: number
): Promise<{ number: string; pdf: Buffer } | null> {
	const model = invoicePdfModel(db, jobId);
	if (!model) return null;
	return { number: model.document.invoiceNumber, pdf: await renderPdf({ kind: 'invoice', model }) };
}
