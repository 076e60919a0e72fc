// Intake: a unit comes in. Superforms with the shared zod schema; errors come back beside
// each field with the input kept, success goes to the new job's page.
import { fail, redirect } from '@sveltejs/kit';
import { isDomainError } from '$lib/server/errors';
import { superValidate, setError } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { asc } from 'drizzle-orm';
import { db, table } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { createJob } from '$lib/server/jobs';
import { listAssignableUsers } from '$lib/server/users';
import { jobIntakeSchema, type JobIntake } from '$lib/schemas/jobs';
import { pageLoad, formActions } from '$lib/server/handlers';
import { getSetting } from '$lib/server/settings';
import { saveWorksheet } from '$lib/server/worksheets';
import { emptySheet, intakeSheetSchema } from '$lib/schemas/worksheets';
import type { FormPath } from 'sveltekit-superforms';
import type { Actions, PageServerLoad } from './$types';

/** Existing customers for the picker, by name (a shop's customer list, not the job queue). */
function customerChoices() {
	return db
		.select({
			id: table.customers.id,
			name: table.customers.name,
			email: table.customers.email,
			phone: table.customers.phone
		})
		.from(table.customers)
		.orderBy(asc(table.customers.name))
		.limit(2000)
		.all();
}

export const load: PageServerLoad = pageLoad(async (event) => {
	const user = requireUser(event);
	const form = await superValidate(zod4(jobIntakeSchema), { errors: false });
	// The one taking the unit in usually benches it; they can pick someone else.
	form.data.technicianId = user.role === 'technician' ? user.id : '';
	return {
		form,
		customers: customerChoices(),
		technicians: listAssignableUsers(db),
		homeMainsVoltsRms: getSetting(db, 'worksheets').homeMainsVoltsRms
	};
});

export const actions: Actions = formActions({
	default: async (event) => {
		const user = requireUser(event);
		// The first lines of the intake checklist ride along with the intake form (the rest of the
		// sheet opens on the job); superforms reads the body, so read them from a copy first.
		const raw = await event.request.clone().formData();
		const form = await superValidate(event.request, zod4(jobIntakeSchema));
		if (!form.valid) return fail(400, { form });
		const intake = intakeFromForm(raw);
		if (intake && !intake.success) {
			for (const issue of intake.error.issues)
				setError(form, '' as FormPath<JobIntake>, `Intake checklist: ${issue.message}`);
			return fail(400, { form });
		}
		let jobId: number;
		try {
			jobId = createJob(db, form.data, user.id).id;
		} catch (e) {
			// The service re-checks what only the database knows (customer, active technician).
			if (isDomainError(e) && e.code === 'invalid' && e.issues) {
				for (const issue of e.issues) {
					const path = (issue.path || 'customerName') as FormPath<JobIntake>;
					setError(form, path, issue.message);
				}
				return fail(400, { form });
			}
			throw e;
		}
		if (intake?.success) saveWorksheet(db, jobId, 'intake', { version: 0, data: intake.data }, user.id);
		redirect(303, `/jobs/${jobId}`);
	}
});

/** The intake checklist's first lines, when any was filled in: parsed with the sheet's own schema. */
function intakeFromForm(raw: FormData) {
	const mains = String(raw.get('intakeMainsSettingVoltsRms') ?? '').trim();
	const fuse = String(raw.get('intakeFuseFound') ?? '').trim();
	const stored = raw.get('intakeStoredForYears') !== null;
	const fee = raw.get('intakeDiagnosisFeeAuthorised') !== null;
	if (!mains && !fuse && !stored && !fee) return null;
	return intakeSheetSchema.safeParse({
		...emptySheet('intake'),
		mainsSettingVoltsRms: mains ? Number(mains.replace(',', '.')) : null,
		fuseFound: fuse,
		storedForYears: stored,
		diagnosisFeeAuthorised: fee
	});
}
