// The supervisor's review of a job awaiting sign-off: the latest before/after snapshots, soak
// verdicts, parts and log, the shop's requirements met or missing, and the signature form
// (approve or send back, with a comment and the password). Supervisors and admins only.
import { fail, redirect } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { DomainError, isDomainError } from '$lib/server/errors';
import { requireSupervisor } from '$lib/server/guards';
import { idParam } from '$lib/server/api';
import { clientAddress } from '$lib/server/auth';
import { getJob } from '$lib/server/jobs';
import { getReview, signOffJob } from '$lib/server/sign-off';
import { getSetting } from '$lib/server/settings';
import { worksheetSummary } from '$lib/server/worksheets';
import { signOffInputSchema } from '$lib/schemas/sign-off';
import { fieldErrors, text } from '$lib/forms';
import { pageLoad, formActions } from '$lib/server/handlers';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	const user = requireSupervisor(event);
	const id = idParam(event.params.id, 'job');
	const job = getJob(db, id);
	if (!job) throw new DomainError('not-found', 'No such job');
	return {
		job,
		review: getReview(db, id, user.id),
		settings: getSetting(db, 'signOff'),
		me: user,
		worksheets: worksheetSummary(db, id),
		worksheetSettings: getSetting(db, 'worksheets')
	};
});

export const actions: Actions = formActions({
	sign: async (event) => {
		const user = requireSupervisor(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const values = { decision: text(form, 'decision'), comment: text(form, 'comment') };
		const parsed = signOffInputSchema.safeParse({ ...values, password: text(form, 'password') });
		if (!parsed.success)
			return fail(400, {
				action: 'sign',
				message: 'The signature needs attention',
				values,
				errors: fieldErrors(parsed.error)
			});
		try {
			await signOffJob(db, id, parsed.data, user, clientAddress(event));
		} catch (e) {
			// Keep what was typed (never the password) beside the refusal.
			if (!isDomainError(e)) throw e;
			return fail(e.status, {
				action: 'sign',
				message: e.message,
				issues: e.issues ?? [],
				values,
				errors: {}
			});
		}
		redirect(303, `/jobs/${id}`);
	}
});
