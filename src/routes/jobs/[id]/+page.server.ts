// A job's page: unit, customer, status with its allowed moves, history, work log and parts.
// Every action guards itself and calls the jobs service; the service enforces the rules again,
// and its refusals (403 approval, 409 move not allowed or job signed off, 404 gone) come back as
// page messages. A signed-off job is locked; a supervisor or admin reopens it with a reason.
import { moneySummary } from '$lib/server/payments';
import { fail } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireSupervisor, requireUser } from '$lib/server/guards';
import { idParam } from '$lib/server/api';
import {
	addLogEntry,
	addPart,
	changeStatus,
	deletePart,
	getJob,
	isLockedStatus,
	reopenJob,
	statusMoves,
	updateJob,
	updatePart
} from '$lib/server/jobs';
import { listAssignableUsers } from '$lib/server/users';
import { listAudit } from '$lib/server/audit';
import { listJobFiles } from '$lib/server/job-files';
import { getSettings } from '$lib/server/settings';
import { listSignOffs, standingSignOff } from '$lib/server/sign-off';
import { worksheetSummary } from '$lib/server/worksheets';
import { reopenSchema } from '$lib/schemas/job-lock';
import {
	jobPatchSchema,
	logEntrySchema,
	partSchema,
	PART_STATES,
	statusChangeSchema
} from '$lib/schemas/jobs';
import { fieldErrors, number, optionalText, text } from '$lib/forms';
import { parseMoneyToCents } from '$lib/format';
import { pageLoad, formActions } from '$lib/server/handlers';
import { listProcedureRuns } from '$lib/server/procedures';
import type { Actions, PageServerLoad } from './$types';

/** The job's own audit trail is shown a page at a time (`?trail=2`). */
const TRAIL_PAGE_SIZE = 20;
function trailPage(url: URL): number {
	const n = Number(url.searchParams.get('trail') ?? '1');
	return Number.isSafeInteger(n) && n >= 1 && n <= 100_000 ? n : 1;
}

export const load: PageServerLoad = pageLoad((event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'job');
	const job = getJob(db, id);
	if (!job) throw new DomainError('not-found', 'No such job');
	return {
		job,
		nextStatuses: statusMoves(job.status, user.role),
		locked: isLockedStatus(job.status),
		canReopen: isLockedStatus(job.status) && (user.role === 'supervisor' || user.role === 'admin'),
		technicians: listAssignableUsers(db),
		me: user,
		// Sign-off: the standing approval with its hash recomputed now, and every signature.
		standingSignOff: standingSignOff(db, id),
		signOffs: listSignOffs(db, id),
		canSignOff: job.status === 'awaiting-review' && (user.role === 'supervisor' || user.role === 'admin'),
		trail: listAudit(db, { job: id, page: trailPage(event.url), pageSize: TRAIL_PAGE_SIZE }),
		worksheets: worksheetSummary(db, id),
		procedures: listProcedureRuns(db, id, { limit: 20 }),
		files: listJobFiles(db, id),
		fileMaxMiB: getSettings(db).jobFiles.maxFileMiB,
		money: moneySummary(db, id)
	};
});

function partIdFrom(form: FormData): number | null {
	const n = Number(text(form, 'partId'));
	return Number.isSafeInteger(n) && n > 0 ? n : null;
}

export const actions: Actions = formActions({
	status: async (event) => {
		const user = requireUser(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const parsed = statusChangeSchema.safeParse({
			status: text(form, 'status'),
			note: optionalText(form, 'note')
		});
		if (!parsed.success)
			return fail(400, { action: 'status', message: 'Choose a status', errors: fieldErrors(parsed.error) });
		changeStatus(db, id, parsed.data, user);
		return { action: 'status', ok: true };
	},

	reopen: async (event) => {
		const user = requireSupervisor(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const values = { reason: text(form, 'reason') };
		const parsed = reopenSchema.safeParse(values);
		if (!parsed.success)
			return fail(400, {
				action: 'reopen',
				message: 'Give a reason',
				values,
				errors: fieldErrors(parsed.error)
			});
		reopenJob(db, id, parsed.data, user);
		return { action: 'reopen', ok: true };
	},

	assign: async (event) => {
		const user = requireUser(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		updateJob(db, id, { technicianId: optionalText(form, 'technicianId') }, user.id);
		return { action: 'assign', ok: true };
	},

	rating: async (event) => {
		const user = requireUser(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const names = ['ratedPowerW', 'ratedLoadOhms', 'ratedPowerBasis', 'ratedThdPercent'];
		const values = Object.fromEntries(names.map((n) => [n, text(form, n)]));
		const parsed = jobPatchSchema.safeParse({
			ratedPowerW: number(form, 'ratedPowerW') ?? null,
			ratedLoadOhms: number(form, 'ratedLoadOhms') ?? null,
			ratedPowerBasis: values.ratedPowerBasis || null,
			ratedThdPercent: number(form, 'ratedThdPercent') ?? null,
			unrestored: form.get('unrestored') === 'on'
		});
		if (!parsed.success)
			return fail(400, {
				action: 'rating',
				message: 'Check the rating',
				values,
				errors: fieldErrors(parsed.error)
			});
		updateJob(db, id, parsed.data, user.id);
		return { action: 'rating', ok: true };
	},

	log: async (event) => {
		const user = requireUser(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const values = { text: text(form, 'text'), minutes: text(form, 'minutes') };
		const parsed = logEntrySchema.safeParse({
			text: values.text,
			minutes: number(form, 'minutes'),
			forCustomer: form.get('forCustomer') === 'on'
		});
		if (!parsed.success) return fail(400, { action: 'log', values, errors: fieldErrors(parsed.error) });
		addLogEntry(db, id, parsed.data, user.id);
		return { action: 'log', ok: true };
	},

	addPart: async (event) => {
		const user = requireUser(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const names = [
			'refDes',
			'description',
			'value',
			'quantity',
			'unitCost',
			'supplier',
			'state',
			'verificationNote'
		];
		const values = Object.fromEntries(names.map((n) => [n, text(form, n)]));
		// The cost is typed in the currency (12.50) and stored in integer cents.
		const costText = values.unitCost.trim();
		const unitCostCents = costText === '' ? undefined : parseMoneyToCents(costText);
		const parsed = partSchema.safeParse({
			refDes: values.refDes,
			description: values.description,
			value: optionalText(form, 'value'),
			quantity: number(form, 'quantity'),
			unitCostCents: unitCostCents ?? undefined,
			supplier: optionalText(form, 'supplier'),
			state: values.state || undefined,
			verificationNote: optionalText(form, 'verificationNote')
		});
		const errors = parsed.success ? {} : fieldErrors(parsed.error);
		if (unitCostCents === null) errors.unitCost = ['Enter an amount like 12.50'];
		if (errors.unitCostCents) errors.unitCost = errors.unitCostCents;
		if (!parsed.success || unitCostCents === null) return fail(400, { action: 'addPart', values, errors });
		addPart(db, id, parsed.data, user.id);
		return { action: 'addPart', ok: true };
	},

	partState: async (event) => {
		const user = requireUser(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const partId = partIdFrom(form);
		const state = text(form, 'state');
		if (!partId) return fail(404, { action: 'partState', message: 'No such part on this job' });
		if (!(PART_STATES as readonly string[]).includes(state))
			return fail(400, { action: 'partState', message: 'Choose ordered, received or fitted' });
		updatePart(db, id, partId, { state: state as (typeof PART_STATES)[number] }, user.id);
		return { action: 'partState', ok: true };
	},

	deletePart: async (event) => {
		const user = requireUser(event);
		const id = idParam(event.params.id, 'job');
		const form = await event.request.formData();
		const partId = partIdFrom(form);
		if (!partId) return fail(404, { action: 'deletePart', message: 'No such part on this job' });
		deletePart(db, id, partId, user.id);
		return { action: 'deletePart', ok: true };
	}
});
