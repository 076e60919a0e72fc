// A job's money as the shop sees it: the estimate (draft, send, versions and the customer's
// answers), the customer's estimate links, payments and refunds at the counter, and the invoice.
import { fail } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { requireSupervisor, requireUser } from '$lib/server/guards';
import { idParam, parseJsonText } from '$lib/server/api';
import { env } from '$lib/server/env';
import { getJob } from '$lib/server/jobs';
import { DomainError } from '$lib/server/errors';
import { pageLoad, formActions } from '$lib/server/handlers';
import { revokeLinkAction } from '$lib/server/link-actions';
import { currentPricing, listEstimates, saveEstimateDraft, sendEstimate } from '$lib/server/estimates';
import { moneySummary, recordCounterPayment } from '$lib/server/payments';
import { issueInvoice } from '$lib/server/invoices';
import { listCustomerLinks } from '$lib/server/customer-links';
import { parseMoney } from '$lib/money';
import { text } from '$lib/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'job');
	const job = getJob(db, id);
	if (!job) throw new DomainError('not-found', 'No such job');
	const supervisor = user.role === 'supervisor' || user.role === 'admin';
	return {
		job: {
			id: job.id,
			make: job.make,
			model: job.model,
			status: job.status,
			customerName: job.customer.name,
			customerEmail: job.customer.email
		},
		pricing: currentPricing(db),
		estimates: listEstimates(db, id),
		parts: job.parts.map((p) => ({
			id: p.id,
			refDes: p.refDes,
			description: p.description,
			value: p.value,
			quantity: p.quantity,
			unitCostMinor: p.unitCostCents
		})),
		money: moneySummary(db, id),
		links: supervisor ? listCustomerLinks(db, id).filter((l) => l.purpose === 'estimate') : [],
		supervisor
	};
});

export const actions: Actions = formActions({
	save: async (event) => {
		const user = requireUser(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const lines = parseJsonText(text(form, 'lines'), 'The estimate lines');
		const note = text(form, 'note').trim() || null;
		const saved = saveEstimateDraft(db, id, { lines, note } as never, user);
		return { action: 'save', ok: true, message: `Draft version ${saved.version} saved` };
	},
	send: async (event) => {
		const user = requireSupervisor(event);
		const form = await event.request.formData();
		const estimateId = Number(text(form, 'estimateId'));
		if (!Number.isSafeInteger(estimateId) || estimateId < 1)
			return fail(400, { action: 'send', message: 'Pick the draft to send' });
		const sent = await sendEstimate(db, estimateId, user, { origin: env.ORIGIN ?? event.url.origin });
		return { action: 'send', ok: true, message: `Version ${sent.version} sent to ${sent.to}` };
	},
	counter: async (event) => {
		const user = requireUser(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const currency = moneySummary(db, id).currency;
		const amountText = text(form, 'amount');
		const amountMinor = parseMoney(amountText, currency);
		if (amountMinor === null)
			return fail(400, {
				action: 'counter',
				message: `The amount “${amountText}” is not a plain amount in ${currency} (like 25 or 25.50)`,
				errors: { amount: ['Use a plain amount like 25 or 25.50'] }
			});
		await recordCounterPayment(
			db,
			id,
			{
				kind: text(form, 'kind') as 'payment',
				method: text(form, 'method') as 'cash',
				amountMinor,
				reference: text(form, 'reference').trim() || null
			},
			user
		);
		return { action: 'counter', ok: true, message: 'Recorded; a receipt went to the customer' };
	},
	invoice: async (event) => {
		const user = requireSupervisor(event);
		const id = idParam(event.params.id, 'job');
		const issued = issueInvoice(db, id, user);
		return { action: 'invoice', ok: true, message: `Invoice ${issued.number} issued` };
	},
	revoke: revokeLinkAction
});
