// The customer report of a job as the shop sees it: the report itself, its private links, and
// (supervisors) sending it to the customer or revoking a link.
import { db } from '$lib/server/db';
import { requireSupervisor, requireUser } from '$lib/server/guards';
import { idParam } from '$lib/server/api';
import { buildReport } from '$lib/server/report';
import { listCustomerLinks } from '$lib/server/customer-links';
import { sendReportToCustomer } from '$lib/server/report-send';
import { getSettings } from '$lib/server/settings';
import { env } from '$lib/server/env';
import { pageLoad, formActions } from '$lib/server/handlers';
import { revokeLinkAction } from '$lib/server/link-actions';
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
	revoke: revokeLinkAction
});
