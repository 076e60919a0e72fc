// Intake: a unit comes in. A plain form action with the shared zod schema (the same approach as
// every other form): errors come back beside each field with what was typed, success goes to
// the new job's page.
import { fail, redirect } from '@sveltejs/kit';
import { asc } from 'drizzle-orm';
import { db, table } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { isDomainError } from '$lib/server/errors';
import { createJob } from '$lib/server/jobs';
import { listAssignableUsers } from '$lib/server/users';
import { jobIntakeSchema } from '$lib/schemas/jobs';
import { pageLoad, formActions } from '$lib/server/handlers';
import { getSetting } from '$lib/server/settings';
import { saveWorksheet } from '$lib/server/worksheets';
import { emptySheet, intakeSheetSchema } from '$lib/schemas/worksheets';
import { fieldErrors, number, text, type FieldErrors } from '$lib/forms';
import type { Actions, PageServerLoad } from './$types';

/** The intake form's text fields, sent back as typed after a refusal. */
const INTAKE_FIELDS = [
	'customerId',
	'customerName',
	'customerEmail',
	'customerPhone',
	'category',
	'make',
	'model',
	'serial',
	'year',
	'ratedPowerW',
	'ratedLoadOhms',
	'ratedPowerBasis',
	'ratedThdPercent',
	'complaint',
	'technicianId',
	'promisedDate'
] as const;

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
	return {
		// The one taking the unit in usually benches it; they can pick someone else.
		technicianId: user.role === 'technician' ? user.id : '',
		customers: customerChoices(),
		technicians: listAssignableUsers(db),
		homeMainsVoltsRms: getSetting(db, 'worksheets').homeMainsVoltsRms
	};
});

export const actions: Actions = formActions({
	default: async (event) => {
		const user = requireUser(event);
		const form = await event.request.formData();
		const values: Record<string, string> = Object.fromEntries(INTAKE_FIELDS.map((n) => [n, text(form, n)]));
		values.unrestored = form.has('unrestored') ? 'on' : '';
		const refuse = (errors: FieldErrors) => fail(400, { values, errors });
		const customerId = Number(values.customerId);
		const parsed = jobIntakeSchema.safeParse({
			customerId: values.customerId && Number.isSafeInteger(customerId) ? customerId : null,
			customerName: values.customerName,
			customerEmail: values.customerEmail,
			customerPhone: values.customerPhone,
			category: values.category,
			make: values.make,
			model: values.model,
			serial: values.serial,
			year: number(form, 'year') ?? null,
			ratedPowerW: number(form, 'ratedPowerW') ?? null,
			ratedLoadOhms: number(form, 'ratedLoadOhms') ?? null,
			ratedPowerBasis: values.ratedPowerBasis || null,
			ratedThdPercent: number(form, 'ratedThdPercent') ?? null,
			unrestored: values.unrestored === 'on',
			complaint: values.complaint,
			technicianId: values.technicianId || null,
			promisedDate: values.promisedDate
		});
		if (!parsed.success) return refuse(fieldErrors(parsed.error));
		// The first lines of the intake checklist ride along with the intake form (the rest of the
		// sheet opens on the job).
		const intake = intakeFromForm(form);
		if (intake && !intake.success)
			return refuse({ _form: intake.error.issues.map((i) => `Intake checklist: ${i.message}`) });
		let jobId: number;
		try {
			jobId = createJob(db, parsed.data, user.id).id;
		} catch (e) {
			// The service re-checks what only the database knows (customer, active technician).
			if (isDomainError(e) && e.code === 'invalid' && e.issues) {
				const errors: FieldErrors = {};
				for (const issue of e.issues) (errors[issue.path || 'customerName'] ??= []).push(issue.message);
				return refuse(errors);
			}
			throw e;
		}
		if (intake?.success) saveWorksheet(db, jobId, 'intake', { version: 0, data: intake.data }, user.id);
		redirect(303, `/jobs/${jobId}`);
	}
});

/** The intake checklist's first lines, when any was filled in: parsed with the sheet's own schema. */
function intakeFromForm(raw: FormData) {
	const mains = text(raw, 'intakeMainsSettingVoltsRms').trim();
	const fuse = text(raw, 'intakeFuseFound').trim();
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
