// The customer report of a job as the shop sees it: the report itself, its private links, and
// (supervisors) sending it to the customer or revoking a link.
import { fail } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { requireSupervisor, requireUser } from '$lib/server/guards';
import { idParam } from '$lib/server/api';
import { buildReport } from '$lib/server/report';
import { listCustomerLinks, revokeCustomerLink } from '$lib/server/customer-links';
import { sendReportToCustomer } from '$lib/server/report-send';
import { getSettings } from '$lib/server/settings';
import { text } from '$lib/forms';
import { env } from '$lib/server/env';
import { pageLoad, formActions } from '$lib/server/handlers';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'job');
	const report = buildReport(db, id);
	const supervisor = user.role === 'supervisor' || user.role === 'admin';
	return {
		report,
		canSend: supervisor,
		allowDraftSend: getSettings(db).customerReport.allowDraftSend,
		links: supervisor ? listCustomerLinks(db, id) : []
	};
});

export const actions: Actions = formActions({
	send: async (event) => {
		const user = requireSupervisor(event);
		const id = idParam(event.params.id, 'job');
		const origin = env.ORIGIN ?? event.url.origin;
		const sent = await sendReportToCustomer(db, id, user.id, { origin });
		return { action: 'send', ok: true, message: `Sent to ${sent.to} (message ${sent.messageId})` };
	},
	revoke: async (event) => {
		const user = requireSupervisor(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const linkId = Number(text(form, 'linkId'));
		if (!Number.isSafeInteger(linkId) || linkId < 1)
			return fail(400, { action: 'revoke', message: 'Pick a link to revoke' });
		revokeCustomerLink(db, id, linkId, user.id);
		return { action: 'revoke', ok: true, message: 'Link revoked: it now answers “not found”.' };
	}
});
