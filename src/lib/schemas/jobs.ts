// Zod schemas for job input (intake form, edits, status changes, work log, parts, list
// queries) and the status-transition rules. Shared by the server and the browser's forms.
import { z } from 'zod';
import { JOB_STATUSES, PART_STATES, RATING_BASES, UNIT_CATEGORIES, type JobStatus, type Role } from './enums';

export * from './enums';

// ── status transitions ──────────────────────────────────────────────────────

/**
 * The working path a unit takes through the bench. Besides the plain forward step, a
 * technician may skip `awaiting-parts` when nothing needs ordering, and step back when a
 * test fails or a reviewer sends the job back.
 */
const FORWARD: Record<JobStatus, readonly JobStatus[]> = {
	received: ['diagnosing', 'awaiting-approval'],
	diagnosing: ['awaiting-approval', 'awaiting-parts', 'repairing'],
	// Entered by sending an estimate (or a revision); left to repairing by the customer's
	// approval from their link, or withdrawn to diagnosis by staff. See SYSTEM_MOVES.
	'awaiting-approval': ['diagnosing', 'repairing'],
	'awaiting-parts': ['awaiting-approval', 'repairing'],
	repairing: ['awaiting-approval', 'awaiting-parts', 'testing'],
	testing: ['awaiting-approval', 'repairing', 'awaiting-review'],
	'awaiting-review': ['approved', 'testing', 'repairing'],
	approved: ['returned'],
	returned: [],
	// Taken off hold, a job resumes at any working status: usually the one it came from,
	// but a hold (a customer query, a part that never came) often changes what comes next.
	// Approval is never restored implicitly: a held job goes back through review.
	'on-hold': [
		'received',
		'diagnosing',
		'awaiting-approval',
		'awaiting-parts',
		'repairing',
		'testing',
		'awaiting-review'
	],
	// A declined unit goes back to its owner unrepaired, or the customer reconsiders (hold).
	declined: ['returned']
};

/**
 * Moves only the system makes, never the status form: a job waits for the customer when an
 * estimate is sent, and the customer's approval from their link sets it repairing. (Sign-off
 * has its own rule: `approved` is entered only by a signature.)
 */
export function isSystemMove(from: JobStatus, to: JobStatus): boolean {
	return to === 'awaiting-approval' || (from === 'awaiting-approval' && to === 'repairing');
}

export const SYSTEM_MOVE_MESSAGE =
	'A job waits for the customer when an estimate is sent (Estimate and payments), and the customer’s approval from their link sets it repairing; withdraw it to diagnosing to revise the estimate';

/** Statuses reachable from `from` by anyone, ignoring role. `returned` is final. */
export function nextStatuses(from: JobStatus): JobStatus[] {
	const out = new Set<JobStatus>(FORWARD[from]);
	// On hold and declined are reachable from anywhere the unit is still in the shop.
	if (from !== 'returned') {
		if (from !== 'on-hold') out.add('on-hold');
		if (from !== 'declined') out.add('declined');
	}
	return JOB_STATUSES.filter((s) => out.has(s));
}

/** Only supervisors and admins may sign a job off. */
export function roleMayEnter(status: JobStatus, role: Role): boolean {
	return status !== 'approved' || role === 'supervisor' || role === 'admin';
}

/** The statuses a user with `role` may move a job to from `from` (what the UI offers). */
export function allowedNextStatuses(from: JobStatus, role: Role): JobStatus[] {
	return nextStatuses(from).filter((s) => roleMayEnter(s, role) && !isSystemMove(from, s));
}

/** Statuses that count as finished for the "open" and "closed" list filters. */
export const CLOSED_STATUSES: readonly JobStatus[] = ['returned', 'declined'];

// ── field helpers ───────────────────────────────────────────────────────────

/** Optional free text: '' (an empty form field), null or missing all mean "none". */
const optionalText = (max: number) => z.string().trim().max(max).nullable().optional();

const isoDate = z
	.string()
	.regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a date like 2026-03-31')
	.refine((s) => {
		const d = new Date(`${s}T00:00:00Z`);
		return !Number.isNaN(d.getTime()) && d.toISOString().slice(0, 10) === s;
	}, 'Not a real calendar date');

const maxYear = new Date().getFullYear() + 1;

// ── jobs ────────────────────────────────────────────────────────────────────

const jobFields = {
	category: z.enum(UNIT_CATEGORIES, 'Choose a unit category'),
	make: z.string().trim().min(1, 'Enter the make').max(80),
	model: z.string().trim().min(1, 'Enter the model').max(80),
	serial: optionalText(80),
	year: z
		.number('Year must be a number')
		.int()
		.min(1900, 'Year must be 1900 or later')
		.max(maxYear, `Year must be ${maxYear} or earlier`)
		.nullable()
		.optional(),
	complaint: z.string().trim().min(1, 'Describe the complaint').max(2000),
	ratedPowerW: z
		.number('Rated power must be a number')
		.positive('Rated power must be above 0 W')
		.max(10_000, 'Rated power above 10 kW is not plausible')
		.nullable()
		.optional(),
	ratedLoadOhms: z
		.number('Rated load must be a number')
		.min(1, 'Rated load must be at least 1 Ω')
		.max(600, 'Rated load above 600 Ω is not plausible')
		.nullable()
		.optional(),
	/** What the rated power means (a soak needs continuous per channel, both driven). */
	ratedPowerBasis: z
		.enum(RATING_BASES, 'Choose what the rated power means: continuous per channel, music power or total')
		.nullable()
		.optional(),
	ratedThdPercent: z
		.number('Rated THD must be a number')
		.positive('Rated THD must be above 0 %')
		.max(10, 'Rated THD above 10 % is not a rating')
		.nullable()
		.optional(),
	/** Not yet restored: heavier soaks ask for confirmation first. */
	unrestored: z.boolean('Unrestored is yes or no').optional(),
	/** User id of the technician, or ''/null for unassigned. */
	technicianId: z.string().trim().max(64).nullable().optional(),
	promisedDate: z
		.union([isoDate, z.literal('')])
		.nullable()
		.optional()
};

/**
 * Intake: either an existing customer (`customerId`) or a new one by name. A new customer
 * with the same e-mail (or the same name and phone) as an existing one reuses that record.
 */
export const jobIntakeSchema = z
	.object({
		customerId: z.number().int().positive().nullable().optional(),
		customerName: z.string().trim().max(120).optional().default(''),
		customerEmail: z
			.union([
				z.literal(''),
				z.string().trim().toLowerCase().max(254).check(z.email('Enter a valid e-mail address'))
			])
			.nullable()
			.optional(),
		customerPhone: optionalText(40),
		...jobFields
	})
	.superRefine((v, ctx) => {
		if (!v.customerId && !v.customerName) {
			ctx.addIssue({ code: 'custom', path: ['customerName'], message: 'Enter the customer’s name' });
		}
	});
export type JobIntake = z.infer<typeof jobIntakeSchema>;

/** Edits to a job's unit details and assignment (status changes go through /status). */
export const jobPatchSchema = z
	.object(jobFields)
	.partial()
	.strict()
	.refine((v) => Object.keys(v).length > 0, 'Nothing to change');
export type JobPatch = z.infer<typeof jobPatchSchema>;

export const statusChangeSchema = z.object({
	status: z.enum(JOB_STATUSES, 'Choose a status'),
	note: optionalText(1000)
});
export type StatusChange = z.infer<typeof statusChangeSchema>;

export const logEntrySchema = z.object({
	text: z.string().trim().min(1, 'Write what was done').max(5000),
	minutes: z
		.number('Minutes must be a number')
		.int('Whole minutes')
		.min(0, 'Minutes cannot be negative')
		.max(24 * 60, 'At most 1440 minutes in one entry')
		.default(0),
	/** Shown on the customer's report, so write it in plain words. */
	forCustomer: z.boolean('For the customer is yes or no').default(false)
});
export type LogEntryInput = z.input<typeof logEntrySchema>;

const partFields = {
	/** Reference designator as printed on the board: C12, Q3, R105, VR2 … */
	refDes: z
		.string()
		.trim()
		.toUpperCase()
		.min(1, 'Enter the reference designator (C12, Q3 …)')
		.max(40)
		.regex(/^[A-Z0-9][A-Z0-9 ,./+-]*$/, 'Letters and numbers, like C12 or Q3'),
	description: z.string().trim().min(1, 'Describe the part').max(200),
	value: optionalText(80),
	quantity: z.number('Quantity must be a number').int('Whole units').min(1).max(10_000).default(1),
	unitCostCents: z
		.number('Cost must be a number')
		.int('Cost is in whole cents')
		.min(0, 'Cost cannot be negative')
		.max(100_000_000)
		.default(0),
	supplier: optionalText(120),
	state: z.enum(PART_STATES).default('ordered'),
	/** How it was checked against counterfeits: markings, weight, hFE … */
	verificationNote: optionalText(500)
};

export const partSchema = z.object(partFields);
export type PartInput = z.infer<typeof partSchema>;

export const partPatchSchema = z
	.object({
		refDes: partFields.refDes,
		description: partFields.description,
		value: partFields.value,
		quantity: z.number().int().min(1).max(10_000),
		unitCostCents: z.number().int().min(0).max(100_000_000),
		supplier: partFields.supplier,
		state: z.enum(PART_STATES),
		verificationNote: partFields.verificationNote
	})
	.partial()
	.strict()
	.refine((v) => Object.keys(v).length > 0, 'Nothing to change');
export type PartPatch = z.infer<typeof partPatchSchema>;

// ── list query ──────────────────────────────────────────────────────────────

export const JOB_SORT_KEYS = [
	'updated',
	'created',
	'promised',
	'status',
	'make',
	'model',
	'customer',
	'technician',
	'id'
] as const;
export type JobSortKey = (typeof JOB_SORT_KEYS)[number];
export type JobSort = JobSortKey | `-${JobSortKey}`;

/** An empty query-string value means "no filter". */
const blankToUndefined = (v: unknown) => (v === '' ? undefined : v);

/**
 * Query string of GET /api/jobs. `status` takes one status, a comma-separated list, or
 * `open` / `closed`; `technician` takes a user id, `me` or `none` (unassigned).
 */
export const jobListQuerySchema = z.object({
	q: z.preprocess(blankToUndefined, z.string().trim().max(100).optional()),
	status: z.preprocess(
		blankToUndefined,
		z
			.string()
			.max(300)
			.transform((s, ctx) => {
				if (s === 'open') return JOB_STATUSES.filter((x) => !CLOSED_STATUSES.includes(x));
				if (s === 'closed') return [...CLOSED_STATUSES];
				const list = s.split(',').map((x) => x.trim());
				const bad = list.filter((x) => !(JOB_STATUSES as readonly string[]).includes(x));
				if (bad.length) {
					ctx.addIssue({ code: 'custom', message: `Unknown status: ${bad.join(', ')}` });
					return z.NEVER;
				}
				return list as JobStatus[];
			})
			.optional()
	),
	technician: z.preprocess(blankToUndefined, z.string().trim().max(64).optional()),
	sort: z.preprocess(
		blankToUndefined,
		z
			.string()
			.refine(
				(s) => (JOB_SORT_KEYS as readonly string[]).includes(s.replace(/^-/, '')),
				`Sort by one of ${JOB_SORT_KEYS.join(', ')} (prefix - for descending)`
			)
			.transform((s) => s as JobSort)
			.default('-updated')
	),
	page: z.preprocess(blankToUndefined, z.coerce.number().int().min(1).max(1_000_000).default(1)),
	pageSize: z.preprocess(
		blankToUndefined,
		z.coerce.number().int().min(1).max(100, 'pageSize is at most 100').default(25)
	)
});
export type JobListQuery = z.infer<typeof jobListQuerySchema>;
