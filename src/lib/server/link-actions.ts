// The form action both the report page and the estimate page offer on a job's customer links:
// a supervisor revokes one (it then answers a bare 404).
import { fail, type RequestEvent } from '@sveltejs/kit';
import { db } from './db';
import { requireSupervisor } from './guards';
import { idParam } from './api';
import { revokeCustomerLink } from './customer-links';
import { text } from '$lib/forms';

export async function revokeLinkAction(event: RequestEvent<{ id: string }>) {
	const user = requireSupervisor(event);
	const id = idParam(event.params.id, 'job');
	const form = await event.request.formData();
	const linkId = Number(text(form, 'linkId'));
	if (!Number.isSafeInteger(linkId) || linkId < 1)
		return fail(400, { action: 'revoke', message: 'Pick a link to revoke' });
	revokeCustomerLink(db, id, linkId, user.id);
	return { action: 'revoke', ok: true, message: 'Link revoked: it now answers “not found”.' };
}
