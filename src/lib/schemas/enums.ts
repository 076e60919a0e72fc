// Names shared by the database schema, the server and the browser (roles, unit categories,
// job statuses, part states) with their display labels. No server imports: forms use these.

export const ROLES = ['technician', 'supervisor', 'admin'] as const;
export type Role = (typeof ROLES)[number];

export const ROLE_LABELS: Record<Role, string> = {
	technician: 'Technician',
	supervisor: 'Supervisor',
	admin: 'Admin'
};

export const UNIT_CATEGORIES = [
	'receiver',
	'integrated-amplifier',
	'power-amplifier',
	'preamplifier',
	'tuner',
	'turntable',
	'tape-deck',
	'valve-amplifier',
	'other'
] as const;
export type UnitCategory = (typeof UNIT_CATEGORIES)[number];

export const UNIT_CATEGORY_LABELS: Record<UnitCategory, string> = {
	receiver: 'Receiver',
	'integrated-amplifier': 'Integrated amplifier',
	'power-amplifier': 'Power amplifier',
	preamplifier: 'Preamplifier',
	tuner: 'Tuner',
	turntable: 'Turntable',
	'tape-deck': 'Tape deck',
	'valve-amplifier': 'Valve amplifier',
	other: 'Other'
};

/**
 * What a job's rated power figure means. A soak's drive is a fraction of the continuous power
 * per channel with the channels driven together, at a stated THD; a music (peak, dynamic) or a
 * total (all channels added) figure would overdrive the unit, so a soak refuses it.
 */
export const RATING_BASES = ['continuous-per-channel', 'music', 'total'] as const;
export type RatingBasis = (typeof RATING_BASES)[number];

export const RATING_BASIS_LABELS: Record<RatingBasis, string> = {
	'continuous-per-channel': 'Continuous per channel, both driven',
	music: 'Music / peak power',
	total: 'Total of all channels'
};

export const JOB_STATUSES = [
	'received',
	'diagnosing',
	'awaiting-approval',
	'awaiting-parts',
	'repairing',
	'testing',
	'awaiting-review',
	'approved',
	'returned',
	'on-hold',
	'declined'
] as const;
export type JobStatus = (typeof JOB_STATUSES)[number];

export const JOB_STATUS_LABELS: Record<JobStatus, string> = {
	received: 'Received',
	diagnosing: 'Diagnosing',
	// The customer's approval of an estimate; never "approved" or "signed off" (see below).
	'awaiting-approval': 'Awaiting customer approval',
	'awaiting-parts': 'Awaiting parts',
	repairing: 'Repairing',
	testing: 'Testing',
	'awaiting-review': 'Awaiting sign-off',
	// "Signed off", not "Approved": a customer's estimate approval is another thing.
	approved: 'Signed off',
	returned: 'Returned to customer',
	'on-hold': 'On hold',
	declined: 'Declined'
};

export const PART_STATES = ['ordered', 'received', 'fitted'] as const;
export type PartState = (typeof PART_STATES)[number];

export const PART_STATE_LABELS: Record<PartState, string> = {
	ordered: 'Ordered',
	received: 'Received',
	fitted: 'Fitted'
};
