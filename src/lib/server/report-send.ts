// Sending the report to the customer: a fresh private link, the PDF attached, plain text and
// HTML bodies, through the shop's SMTP server (the local catcher in development and tests).
// The send and its SMTP message id go to the audit trail; a failed send revokes its link and
// says why, so it can simply be tried again.
import type { Db } from './db/open';
import { DomainError } from './errors';
import { audit } from './audit';
import { getJob } from './jobs';
import { getSettings } from './settings';
import { standingSignOff } from './sign-off';
import { buildReport } from './report';
import { renderPdf } from './pdf-renderer';
import {
	createCustomerLink,
	customerEmailOrRefuse,
	customerLinkUrl,
	revokeCustomerLink
} from './customer-links';
import { escapeHtml, sendMail, type OutgoingMail } from './mail';
import { renderInvoicePdf } from './invoices';
import { moneySummary } from './payments';
import { formatMoney } from '$lib/money';

export interface SendResult {
	to: string;
	messageId: string;
	linkId: number;
	url: string;
}

export async function sendReportToCustomer(
	db: Db,
	jobId: number,
	actorId: string,
	opts: { origin: string; send?: (m: OutgoingMail) => Promise<{ messageId: string }>; nowMs?: number }
): Promise<SendResult> {
	const nowMs = opts.nowMs ?? Date.now();
	const job = getJob(db, jobId);
	if (!job) throw new DomainError('not-found', 'No such job');
	const to = customerEmailOrRefuse(job.customer);
	const settings = getSettings(db);
	const standing = standingSignOff(db, jobId);
	const signed = !!standing && standing.signOff.decision === 'approve' && standing.check.intact;
	if (!signed && !settings.customerReport.allowDraftSend)
		throw new DomainError(
			'conflict',
			'The job is not signed off yet: send the report after sign-off, or allow sending drafts in Settings.'
		);
	const model = buildReport(db, jobId, nowMs);
	const pdf = await renderPdf({ kind: 'report', model });
	// Once issued, the invoice travels with the report.
	const invoice = await renderInvoicePdf(db, jobId);
	const link = createCustomerLink(
		db,
		{ jobId, purpose: 'report', createdBy: actorId, lifetimeDays: settings.customerReport.linkLifetimeDays },
		nowMs
	);
	const url = customerLinkUrl(opts.origin, 'report', link.token);
	const until = link.expiresAt.toISOString().slice(0, 10);
	// With an invoice that is not paid in full, a payment link (the estimate page, where the
	// balance has its pay button) rides along.
	const money = invoice ? moneySummary(db, jobId) : null;
	const due = money?.balanceDueMinor ?? 0;
	const payLink =
		money && due > 0
			? createCustomerLink(
					db,
					{
						jobId,
						purpose: 'estimate',
						createdBy: actorId,
						lifetimeDays: settings.customerReport.linkLifetimeDays
					},
					nowMs
				)
			: null;
	const payUrl = payLink ? customerLinkUrl(opts.origin, 'estimate', payLink.token) : null;
	const payLine =
		money && payUrl ? `Balance due: ${formatMoney(due, money.currency)}. Pay it online here: ${payUrl}` : '';
	const unit = `${job.make} ${job.model}`;
	const text = [
		`Hello ${job.customer.name},`,
		'',
		`your ${unit} has been through our bench. The measured report is attached as a PDF, and you can read it online until ${until}:`,
		url,
		'',
		signed ? 'The work has been checked and signed off.' : 'This is a draft: the work is not signed off yet.',
		invoice ? `Invoice ${invoice.number} is attached too.` : '',
		payLine,
		'',
		model.shop.name,
		[model.shop.phone, model.shop.email].filter(Boolean).join(' · ')
	].join('\n');
	const html = `<p>Hello ${escapeHtml(job.customer.name)},</p><p>your ${escapeHtml(unit)} has been through our bench. The measured report is attached as a PDF, and you can read it online until ${until}:</p><p><a href="${escapeHtml(url)}">${escapeHtml(url)}</a></p><p>${signed ? 'The work has been checked and signed off.' : 'This is a draft: the work is not signed off yet.'}</p>${payUrl && money ? `<p>Balance due: ${escapeHtml(formatMoney(due, money.currency))}. <a href="${escapeHtml(payUrl)}">Pay it online</a></p>` : ''}<p>${escapeHtml(model.shop.name)}</p>`;
	let messageId: string;
	try {
		({ messageId } = await (opts.send ?? sendMail)({
			to,
			subject: `Your ${unit}: measured service report (job ${jobId})`,
			text,
			html,
			attachments: [
				{ filename: `report-job-${jobId}.pdf`, content: pdf, contentType: 'application/pdf' },
				...(invoice
					? [
							{
								filename: `invoice-${invoice.number}.pdf`,
								content: invoice.pdf,
								contentType: 'application/pdf'
							}
						]
					: [])
			]
		}));
	} catch (e) {
		revokeCustomerLink(db, jobId, link.id, actorId, nowMs);
		if (payLink) revokeCustomerLink(db, jobId, payLink.id, actorId, nowMs);
		throw new DomainError(
			'busy',
			`The mail server did not take the message (${e instanceof Error ? e.message : String(e)}). Nothing was sent; try again.`
		);
	}
	audit(db, {
		actorId,
		action: 'report.sent',
		jobId,
		subject: `job #${jobId}`,
		detail: { to, messageId, linkId: link.id, draft: !signed, payLinkId: payLink?.id ?? null },
		at: new Date(nowMs)
	});
	return { to, messageId, linkId: link.id, url };
}
