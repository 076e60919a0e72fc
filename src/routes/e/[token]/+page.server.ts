// The customer's estimate link: the latest estimate, approve (typed name + consent) or decline
// (reason), then the deposit or the balance through the hosted checkout. Signed out; an
// unknown, expired or revoked link is a bare 404.
import { fail } from '@sveltejs/kit';
import { DomainError } from '$lib/server/errors';
import { formActions, pageLoad } from '$lib/server/handlers';
import { db } from '$lib/server/db';
import { env } from '$lib/server/env';
import { recordLinkView } from '$lib/server/customer-links';
import { customerEstimatePage, decideEstimate } from '$lib/server/estimates';
import { moneySummary, startCheckout } from '$lib/server/payments';
import { text } from '$lib/forms';
import type { Actions, PageServerLoad } from './$types';

const PRIVATE_HEADERS = {
	'cache-control': 'no-store',
	'referrer-policy': 'no-referrer',
	'x-robots-tag': 'noindex, nofollow'
};

export const load: PageServerLoad = pageLoad((event) => {
	event.setHeaders(PRIVATE_HEADERS);
	const page = customerEstimatePage(db, event.params.token);
	if (!page) throw new DomainError('not-found', 'Not found');
	recordLinkView(db, page.linkId);
	const m = moneySummary(db, page.jobId);
	const checkout = event.url.searchParams.get('checkout');
	return {
		page,
		money: {
			currency: m.currency,
			totalMinor: m.totalMinor,
			totalSource: m.totalSource,
			depositMinor: m.depositMinor,
			depositDueMinor: m.depositDueMinor,
			receivedMinor: m.receivedMinor,
			balanceDueMinor: m.balanceDueMinor,
			invoiceNumber: m.invoice?.number ?? null,
			// What the customer sees of each payment: no staff names.
			payments: m.payments.map((p) => ({
				id: p.id,
				kind: p.kind,
				methodLabel: p.methodLabel,
				amountMinor: p.amountMinor,
				receivedAt: p.receivedAt
			}))
		},
		checkout: checkout === 'done' || checkout === 'cancelled' ? checkout : null
	};
});

export const actions: Actions = formActions({
	decide: async (event) => {
		const form = await event.request.formData();
		const decision = text(form, 'decision');
		const input =
			decision === 'approve'
				? {
						decision,
						typedName: text(form, 'typedName'),
						consent: form.get('consent') === 'on' ? true : undefined,
						seenSha256: text(form, 'seenSha256')
					}
				: {
						decision,
						typedName: text(form, 'typedName'),
						reason: text(form, 'reason'),
						seenSha256: text(form, 'seenSha256')
					};
		const done = await decideEstimate(db, event.params.token, input as never);
		return {
			action: 'decide',
			ok: true,
			message:
				done.decision === 'approve'
					? 'Thank you: the estimate is approved and the shop has been told.'
					: 'Thank you: the shop has been told you declined the estimate.'
		};
	},
	pay: async (event) => {
		const form = await event.request.formData();
		const purpose = text(form, 'purpose');
		if (purpose !== 'deposit' && purpose !== 'balance')
			return fail(400, { action: 'pay', message: 'Choose the deposit or the balance to pay' });
		const { url } = await startCheckout(db, event.params.token, purpose, {
			origin: env.ORIGIN ?? event.url.origin
		});
		return { action: 'pay', ok: true, checkoutUrl: url, message: 'Opening the payment page…' };
	}
});
