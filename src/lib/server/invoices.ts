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
import { heading, openDocument, paragraph, pdfText, table as pdfTable } from './report-pdf';
import { formatMoney } from '$lib/money';
import type { Role } from '$lib/schemas/enums';

const LINE_KIND_LABELS: Record<string, string> = {
	labour: 'Labour',
	part: 'Part',
	fixed: 'Fixed price',
	fee: 'Fee'
};

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

/** The job's invoice as a PDF, or null when none is issued. */
export async function renderInvoicePdf(
	db: Db,
	jobId: number
): Promise<{ number: string; pdf: Buffer } | null> {
	const row = db.select().from(table.invoices).where(eq(table.invoices.jobId, jobId)).get();
	if (!row) return null;
	const d = JSON.parse(row.documentJson) as InvoiceDocument;
	const settings = getSettings(db);
	const money = moneySummary(db, jobId);
	const fmt = (n: number) => formatMoney(n, d.currency);
	const { doc, done } = openDocument({
		title: `Invoice ${d.invoiceNumber} — job ${jobId}`,
		author: settings.shopName,
		subject: 'Invoice',
		createdAt: new Date(d.issuedAt)
	});
	doc.font('bold').fontSize(18).text(pdfText(settings.shopName));
	const r = settings.customerReport;
	const contact = [r.address, r.phone, r.email].filter(Boolean).join(' · ');
	if (contact) paragraph(doc, contact, { muted: true });
	doc
		.moveDown(0.5)
		.font('bold')
		.fontSize(13)
		.text(pdfText(`Invoice ${d.invoiceNumber}`))
		.font('body')
		.fontSize(10);
	paragraph(doc, `Issued ${d.issuedAt.slice(0, 10)} to ${d.customerName} · ${d.unit} · job ${jobId}`);
	paragraph(doc, `From estimate version ${d.version}, approved by the customer.`, { muted: true });
	heading(doc, 'Work and parts');
	pdfTable(
		doc,
		['Item', 'Kind', 'Amount'],
		d.lines.map((l) => [l.description, LINE_KIND_LABELS[l.kind] ?? l.kind, fmt(l.amountMinor)]),
		[0.6, 0.18, 0.22]
	);
	const tax = `Tax ${(d.taxRateBasisPoints / 100).toFixed(2).replace(/\.00$/, '')} %${d.pricesIncludeTax ? ' (included in the prices)' : ''}`;
	pdfTable(
		doc,
		['', 'Amount'],
		[
			['Net', fmt(d.totals.netMinor)],
			[tax, fmt(d.totals.taxMinor)],
			['Total', fmt(d.totals.grossMinor)],
			['Received', fmt(money.receivedMinor)],
			['Balance due', fmt(Math.max(0, d.totals.grossMinor - money.receivedMinor))]
		],
		[0.78, 0.22]
	);
	if (money.payments.length) {
		heading(doc, 'Payments');
		pdfTable(
			doc,
			['Date', 'Method', 'Kind', 'Amount'],
			money.payments.map((p) => [p.receivedAt.slice(0, 10), p.methodLabel, p.kind, fmt(p.amountMinor)]),
			[0.2, 0.3, 0.2, 0.3]
		);
	}
	if (r.footer) paragraph(doc, r.footer, { muted: true });
	doc.end();
	return { number: d.invoiceNumber, pdf: await done };
}
