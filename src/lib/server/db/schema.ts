// Benchlight's SQLite schema. camelCase keys map to snake_case columns; timestamps are
// integer milliseconds (Drizzle `timestamp_ms` → Date); money is integer cents.
import { sql } from 'drizzle-orm';
import {
	sqliteTable,
	text,
	integer,
	real,
	blob,
	index,
	primaryKey,
	uniqueIndex
} from 'drizzle-orm/sqlite-core';

// Roles, unit categories, job statuses and part states live in $lib/schemas/enums so the
// browser can use them too (a relative import: drizzle-kit and scripts do not know `$lib`).
import { ROLES, UNIT_CATEGORIES, JOB_STATUSES, PART_STATES, RATING_BASES } from '../../schemas/enums';
import { SIGN_OFF_DECISIONS } from '../../schemas/sign-off';
import { WORKSHEET_KINDS } from '../../schemas/worksheets';
export { ROLES, UNIT_CATEGORIES, JOB_STATUSES, PART_STATES };
export type { Role, UnitCategory, JobStatus, PartState } from '../../schemas/enums';

export const SNAPSHOT_STAGES = ['before', 'after', 'other'] as const;
export type SnapshotStage = (typeof SNAPSHOT_STAGES)[number];

export const SOAK_STATUSES = ['running', 'passed', 'failed', 'aborted'] as const;
export type SoakStatus = (typeof SOAK_STATUSES)[number];

const createdAt = () =>
	integer('created_at', { mode: 'timestamp_ms' })
		.notNull()
		.default(sql`(unixepoch('subsec') * 1000)`);
const updatedAt = () =>
	integer('updated_at', { mode: 'timestamp_ms' })
		.notNull()
		.default(sql`(unixepoch('subsec') * 1000)`);

// ── accounts ────────────────────────────────────────────────────────────────

export const users = sqliteTable('users', {
	id: text('id').primaryKey(),
	email: text('email').notNull().unique(),
	name: text('name').notNull(),
	role: text('role', { enum: ROLES }).notNull(),
	passwordHash: text('password_hash').notNull(),
	active: integer('active', { mode: 'boolean' }).notNull().default(true),
	createdAt: createdAt(),
	updatedAt: updatedAt()
});

/** Session ids are the SHA-256 (hex) of the random token held in the cookie; the token itself is never stored. */
export const sessions = sqliteTable(
	'sessions',
	{
		id: text('id').primaryKey(),
		userId: text('user_id')
			.notNull()
			.references(() => users.id, { onDelete: 'cascade' }),
		/** lucia's sliding expiry, in seconds since the epoch (the adapter's format). */
		expiresAt: integer('expires_at').notNull(),
		/** Start of the session, for the absolute lifetime that lucia does not enforce. */
		createdAt: createdAt()
	},
	(t) => [index('sessions_user_idx').on(t.userId)]
);

// ── shop ────────────────────────────────────────────────────────────────────

/** Shop-wide settings as JSON values keyed by name (bridge URL, soak default limits, mains frequency …). */
export const settings = sqliteTable('settings', {
	key: text('key').primaryKey(),
	value: text('value', { mode: 'json' }).notNull(),
	updatedAt: updatedAt()
});

export const customers = sqliteTable(
	'customers',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		name: text('name').notNull(),
		email: text('email'),
		phone: text('phone'),
		notes: text('notes'),
		createdAt: createdAt()
	},
	(t) => [index('customers_name_idx').on(t.name)]
);

export const jobs = sqliteTable(
	'jobs',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		customerId: integer('customer_id')
			.notNull()
			.references(() => customers.id),
		category: text('category', { enum: UNIT_CATEGORIES }).notNull(),
		make: text('make').notNull(),
		model: text('model').notNull(),
		serial: text('serial'),
		year: integer('year'),
		complaint: text('complaint').notNull(),
		ratedPowerW: real('rated_power_w'),
		ratedLoadOhms: real('rated_load_ohms'),
		/** What the rated power means; a soak refuses music-power and total figures. */
		ratedPowerBasis: text('rated_power_basis', { enum: RATING_BASES }),
		/** The THD at which the unit's rated power is stated, in percent. */
		ratedThdPercent: real('rated_thd_percent'),
		/** Marked at intake: not yet restored (old capacitors, compound, bias) — heavier soaks ask first. */
		unrestored: integer('unrestored', { mode: 'boolean' }).notNull().default(false),
		status: text('status', { enum: JOB_STATUSES }).notNull().default('received'),
		technicianId: text('technician_id').references(() => users.id),
		/** Calendar date promised to the customer, ISO `YYYY-MM-DD`. */
		promisedDate: text('promised_date'),
		createdAt: createdAt(),
		updatedAt: updatedAt()
	},
	(t) => [
		index('jobs_status_idx').on(t.status, t.updatedAt),
		index('jobs_technician_idx').on(t.technicianId, t.updatedAt),
		index('jobs_updated_idx').on(t.updatedAt),
		index('jobs_customer_idx').on(t.customerId)
	]
);

export const jobStatusHistory = sqliteTable(
	'job_status_history',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		userId: text('user_id').references(() => users.id),
		fromStatus: text('from_status', { enum: JOB_STATUSES }),
		toStatus: text('to_status', { enum: JOB_STATUSES }).notNull(),
		note: text('note'),
		createdAt: createdAt()
	},
	(t) => [index('job_status_history_job_idx').on(t.jobId)]
);

export const workLog = sqliteTable(
	'work_log',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		authorId: text('author_id')
			.notNull()
			.references(() => users.id),
		text: text('text').notNull(),
		minutes: integer('minutes').notNull().default(0),
		/** Shown on the customer's report (in plain words); internal notes never are. */
		forCustomer: integer('for_customer', { mode: 'boolean' }).notNull().default(false),
		createdAt: createdAt()
	},
	(t) => [index('work_log_job_idx').on(t.jobId)]
);

export const parts = sqliteTable(
	'parts',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		/** Reference designator on the schematic: C12, Q3, R105 … */
		refDes: text('ref_des').notNull(),
		description: text('description').notNull(),
		/** Value or rating as printed: "4700 µF 63 V", "0.22 Ω 5 W". */
		value: text('value'),
		quantity: integer('quantity').notNull().default(1),
		unitCostCents: integer('unit_cost_cents').notNull().default(0),
		supplier: text('supplier'),
		state: text('state', { enum: PART_STATES }).notNull().default('ordered'),
		/** How the part was checked against counterfeits (markings, weight, hFE …). */
		verificationNote: text('verification_note'),
		createdAt: createdAt(),
		updatedAt: updatedAt()
	},
	(t) => [index('parts_job_idx').on(t.jobId)]
);

// ── measurement ─────────────────────────────────────────────────────────────

/**
 * A named set of pass/fail limits and the conditions they assume.
 * `conditions` and `limits` are validated by the zod schemas in $lib/limit-profiles.
 */
export const limitProfiles = sqliteTable('limit_profiles', {
	id: integer('id').primaryKey({ autoIncrement: true }),
	name: text('name').notNull().unique(),
	description: text('description'),
	conditions: text('conditions', { mode: 'json' }).notNull(),
	limits: text('limits', { mode: 'json' }).notNull(),
	/** Profiles referenced by snapshots are archived, never deleted. */
	archived: integer('archived', { mode: 'boolean' }).notNull().default(false),
	createdBy: text('created_by').references(() => users.id),
	createdAt: createdAt(),
	updatedAt: updatedAt()
});

/**
 * A captured measurement. Immutable once written: triggers in the migrations refuse
 * UPDATE and DELETE on this table and on snapshot_audio.
 */
export const snapshots = sqliteTable(
	'snapshots',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id),
		createdBy: text('created_by')
			.notNull()
			.references(() => users.id),
		label: text('label').notNull(),
		stage: text('stage', { enum: SNAPSHOT_STAGES }).notNull(),
		profileId: integer('profile_id').references(() => limitProfiles.id),
		/** The profile as it was when the snapshot was taken (name, conditions, limits). */
		profile: text('profile', { mode: 'json' }),
		sampleRateHz: integer('sample_rate_hz').notNull(),
		channelCount: integer('channel_count').notNull(),
		sampleCount: integer('sample_count').notNull(),
		fullScaleVolts: real('full_scale_volts').notNull(),
		loadOhms: real('load_ohms'),
		/** Server-computed analysis results with every condition (the CLI's JSON shape and more). */
		results: text('results', { mode: 'json' }).notNull(),
		verdict: text('verdict', { enum: ['pass', 'fail', 'none'] }).notNull(),
		checks: text('checks', { mode: 'json' }).notNull(),
		/** Log-spaced compact spectrum for plots (SnapshotSpectrum in $lib/server/snapshots): { fftSize, window, channels: [{ frequencyHz[], levelDbv[] }] }. */
		spectrum: text('spectrum', { mode: 'json' }).notNull(),
		/** Generator, simulator and analysis settings the browser reported (informational). */
		settings: text('settings', { mode: 'json' }),
		createdAt: createdAt()
	},
	(t) => [index('snapshots_job_idx').on(t.jobId)]
);

/** The raw WAV each snapshot was computed from, kept so it can be re-analysed later. */
export const snapshotAudio = sqliteTable('snapshot_audio', {
	snapshotId: integer('snapshot_id')
		.primaryKey()
		.references(() => snapshots.id),
	sha256: text('sha256').notNull(),
	wav: blob('wav', { mode: 'buffer' }).notNull()
});

// ── heat soak ───────────────────────────────────────────────────────────────

export const soakRuns = sqliteTable(
	'soak_runs',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id),
		createdBy: text('created_by')
			.notNull()
			.references(() => users.id),
		/** 'eighth-power-60' | 'third-power-60' | 'custom' */
		preset: text('preset').notNull(),
		frequencyHz: real('frequency_hz').notNull(),
		loadOhms: real('load_ohms').notNull(),
		drivePowerW: real('drive_power_w').notNull(),
		driveVrms: real('drive_vrms').notNull(),
		durationS: integer('duration_s').notNull(),
		/** Simulator thermal time per wall-clock time (1 on real hardware); durations and rates are in soak time. */
		timeScale: real('time_scale').notNull().default(1),
		/** The bridge's latest temperature seq when the run started: readings after it belong to the run. */
		startSeq: integer('start_seq'),
		channels: text('channels', { mode: 'json' }).notNull(),
		limits: text('limits', { mode: 'json' }).notNull(),
		probes: text('probes', { mode: 'json' }).notNull(),
		status: text('status', { enum: SOAK_STATUSES }).notNull().default('running'),
		startedAt: integer('started_at', { mode: 'timestamp_ms' }).notNull(),
		endedAt: integer('ended_at', { mode: 'timestamp_ms' }),
		abortReason: text('abort_reason'),
		/** The run's summary, kept up to date as readings arrive (final once the run has ended). */
		summary: text('summary', { mode: 'json' }),
		/**
		 * Bookkeeping behind the incremental summary (readings stored, last seq, the last tick, where
		 * the steady-state search resumes); null for a run stored before it existed (rebuilt once).
		 */
		summaryState: text('summary_state', { mode: 'json' }),
		createdAt: createdAt()
	},
	(t) => [index('soak_runs_job_idx').on(t.jobId)]
);

/** One temperature reading; the primary key makes a repeated upload harmless. */
export const soakReadings = sqliteTable(
	'soak_readings',
	{
		runId: integer('run_id')
			.notNull()
			.references(() => soakRuns.id, { onDelete: 'cascade' }),
		probe: text('probe').notNull(),
		/** The bridge's temperature sequence number (monotone across bridge restarts). */
		seq: integer('seq').notNull(),
		/** Bridge wall-clock time of the reading, ms since the epoch. */
		t: integer('t').notNull(),
		celsius: real('celsius').notNull(),
		/** The bridge's boot id, so a restart shows as a gap. */
		bootId: text('boot_id'),
		receivedAt: createdAt()
	},
	(t) => [
		primaryKey({ columns: [t.runId, t.probe, t.seq] }),
		index('soak_readings_run_seq_idx').on(t.runId, t.seq),
		// The incremental breach check reads the readings around a new batch by time.
		index('soak_readings_run_t_idx').on(t.runId, t.t)
	]
);

/**
 * A run's chart, downsampled as readings arrive: a fixed number of time buckets per probe (see
 * SERIES_BUCKETS in $lib/soak/series), so a day-long run charts from at most a few thousand rows.
 */
export const soakSeries = sqliteTable(
	'soak_series',
	{
		runId: integer('run_id')
			.notNull()
			.references(() => soakRuns.id, { onDelete: 'cascade' }),
		probe: text('probe').notNull(),
		bucket: integer('bucket').notNull(),
		n: integer('n').notNull(),
		sumC: real('sum_c').notNull(),
		minC: real('min_c').notNull(),
		maxC: real('max_c').notNull()
	},
	(t) => [primaryKey({ columns: [t.runId, t.probe, t.bucket] })]
);

/** Things that happened during a run: gaps, breaches, alarms, THD+N samples, notes. */
export const soakEvents = sqliteTable(
	'soak_events',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		runId: integer('run_id')
			.notNull()
			.references(() => soakRuns.id, { onDelete: 'cascade' }),
		kind: text('kind').notNull(),
		at: integer('at', { mode: 'timestamp_ms' }).notNull(),
		detail: text('detail', { mode: 'json' }),
		createdAt: createdAt()
	},
	(t) => [index('soak_events_run_idx').on(t.runId)]
);

// ── audit and sign-off ──────────────────────────────────────────────────────

/**
 * Append-only record of who did what and when, written in the same transaction as the action.
 * Triggers in the migration refuse UPDATE and DELETE. `action` is one of AUDIT_ACTIONS in
 * $lib/schemas/audit; `subject` names the thing acted on ("job #12", "part C12", "user …").
 */
export const auditLog = sqliteTable(
	'audit_log',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		at: integer('at', { mode: 'timestamp_ms' })
			.notNull()
			.default(sql`(unixepoch('subsec') * 1000)`),
		/** Null for the system itself (seed, housekeeping). */
		actorId: text('actor_id').references(() => users.id),
		action: text('action').notNull(),
		/** The job the action concerns, when it concerns one (no foreign key: the trail outlives nothing). */
		jobId: integer('job_id'),
		subject: text('subject').notNull(),
		detail: text('detail', { mode: 'json' })
	},
	(t) => [
		index('audit_log_at_idx').on(t.at),
		index('audit_log_job_idx').on(t.jobId, t.at),
		index('audit_log_actor_idx').on(t.actorId, t.at),
		index('audit_log_action_idx').on(t.action, t.at)
	]
);

export { SIGN_OFF_DECISIONS };
export type SignOffDecision = (typeof SIGN_OFF_DECISIONS)[number];

/**
 * An electronic signature on a job: who (with the printed name as it was), when, what it means,
 * the comment, and a SHA-256 over the canonical JSON of everything it covers (kept beside it).
 * Immutable: triggers refuse UPDATE and DELETE; a reopening adds a row to sign_off_supersessions.
 */
export const signOffs = sqliteTable(
	'sign_offs',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id),
		signerId: text('signer_id')
			.notNull()
			.references(() => users.id),
		/** The signer's name as printed at signing (a later rename does not change the record). */
		signerName: text('signer_name').notNull(),
		signerRole: text('signer_role', { enum: ROLES }).notNull(),
		decision: text('decision', { enum: SIGN_OFF_DECISIONS }).notNull(),
		/** "approved for return to the customer" or "sent back". */
		meaning: text('meaning').notNull(),
		comment: text('comment').notNull(),
		signedAt: integer('signed_at', { mode: 'timestamp_ms' }).notNull(),
		/** The requirement evaluation at signing (met and missing items). */
		requirements: text('requirements', { mode: 'json' }).notNull(),
		/** True when the signer captured the after snapshot and the shop setting allowed it. */
		selfSignOff: integer('self_sign_off', { mode: 'boolean' }).notNull().default(false),
		/** The canonical JSON (RFC 8785) of what the signature covers, exactly as hashed. */
		covered: text('covered').notNull(),
		/** SHA-256 (hex) of `covered`. */
		sha256: text('sha256').notNull()
	},
	(t) => [index('sign_offs_job_idx').on(t.jobId, t.signedAt)]
);

/** A sign-off withdrawn by a reopening. Sign-offs are immutable, so supersession is its own row. */
export const signOffSupersessions = sqliteTable('sign_off_supersessions', {
	signOffId: integer('sign_off_id')
		.primaryKey()
		.references(() => signOffs.id),
	supersededAt: integer('superseded_at', { mode: 'timestamp_ms' }).notNull(),
	supersededBy: text('superseded_by')
		.notNull()
		.references(() => users.id),
	reason: text('reason').notNull()
});

export type User = typeof users.$inferSelect;
export type Session = typeof sessions.$inferSelect;
export type Customer = typeof customers.$inferSelect;
export type Job = typeof jobs.$inferSelect;
export type JobStatusHistory = typeof jobStatusHistory.$inferSelect;
export type WorkLogEntry = typeof workLog.$inferSelect;
export type Part = typeof parts.$inferSelect;
export type Setting = typeof settings.$inferSelect;
export type LimitProfile = typeof limitProfiles.$inferSelect;
export type Snapshot = typeof snapshots.$inferSelect;
export type SoakRun = typeof soakRuns.$inferSelect;
export type SoakReading = typeof soakReadings.$inferSelect;
export type SoakEvent = typeof soakEvents.$inferSelect;

export type AuditEntry = typeof auditLog.$inferSelect;
export type SignOff = typeof signOffs.$inferSelect;
export type SignOffSupersession = typeof signOffSupersessions.$inferSelect;

// ---- worksheets ----

/**
 * A job's bench worksheets (intake checklist, first power-up, bias and offset, safety check), one
 * row per job and kind holding the current sheet as JSON (validated on write and on read) and its
 * version, raised by one on every save so a stale edit is refused.
 */
export const jobWorksheets = sqliteTable(
	'job_worksheets',
	{
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		kind: text('kind', { enum: WORKSHEET_KINDS }).notNull(),
		data: text('data', { mode: 'json' }).notNull(),
		version: integer('version').notNull(),
		updatedBy: text('updated_by').references(() => users.id),
		updatedAt: updatedAt()
	},
	(t) => [primaryKey({ columns: [t.jobId, t.kind] })]
);

/** Every saved version of a worksheet: who saved what, when. Immutable (triggers). */
export const jobWorksheetVersions = sqliteTable(
	'job_worksheet_versions',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		kind: text('kind', { enum: WORKSHEET_KINDS }).notNull(),
		version: integer('version').notNull(),
		data: text('data', { mode: 'json' }).notNull(),
		savedBy: text('saved_by').references(() => users.id),
		savedAt: integer('saved_at', { mode: 'timestamp_ms' }).notNull()
	},
	(t) => [index('job_worksheet_versions_job_idx').on(t.jobId, t.kind, t.version)]
);

export type JobWorksheet = typeof jobWorksheets.$inferSelect;
export type JobWorksheetVersion = typeof jobWorksheetVersions.$inferSelect;

// ---- procedures ----

/**
 * A bench procedure's result (sweep, phono equalisation, maximum power): the conditions and raw
 * per-step readings as the bench sent them, the figures and verdict the server computed from
 * them. Immutable once written (triggers in the migration).
 */
export const procedureRuns = sqliteTable(
	'procedure_runs',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		kind: text('kind', {
			enum: ['response', 'phono', 'max-power', 'crosstalk', 'imd', 'meter', 'stability']
		}).notNull(),
		label: text('label').notNull(),
		/** The upload, validated: conditions and raw readings. */
		input: text('input', { mode: 'json' }).notNull(),
		/** What the server computed from it. */
		result: text('result', { mode: 'json' }).notNull(),
		verdict: text('verdict', { enum: ['pass', 'fail', 'none'] }).notNull(),
		createdBy: text('created_by')
			.notNull()
			.references(() => users.id),
		createdAt: createdAt()
	},
	(t) => [index('procedure_runs_job_idx').on(t.jobId, t.createdAt)]
);

// ---- job files ----

/**
 * A file on a job (photo, PDF, WAV), its bytes in the blob store under `sha256`. `jobId` is the
 * owner today; it is nullable so another owner (a model's notebook) can be added as its own
 * column beside it without rebuilding the table. Removal is a mark, never a deletion.
 */
export const jobFiles = sqliteTable(
	'job_files',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id').references(() => jobs.id),
		/** SHA-256 of the stored (served) bytes: photos have their metadata stripped at upload. */
		sha256: text('sha256').notNull(),
		/** SHA-256 of the bytes as uploaded (differs from `sha256` for photos; those bytes are not kept). */
		receivedSha256: text('received_sha256').notNull(),
		/** The uploader's file name, for display only; never a path. */
		name: text('name').notNull(),
		/** Decided by content: jpeg, png, webp, pdf or wav. */
		type: text('type', { enum: ['jpeg', 'png', 'webp', 'pdf', 'wav'] }).notNull(),
		bytes: integer('bytes').notNull(),
		uploadedBy: text('uploaded_by')
			.notNull()
			.references(() => users.id),
		uploadedAt: integer('uploaded_at', { mode: 'timestamp_ms' }).notNull(),
		removedAt: integer('removed_at', { mode: 'timestamp_ms' }),
		removedBy: text('removed_by').references(() => users.id),
		/** A small WebP of a photo, in the blob store. */
		thumbSha256: text('thumb_sha256'),
		/** WAV figures measured at upload (WavFigures in $lib/schemas/job-files). */
		analysis: text('analysis', { mode: 'json' }),
		/** The snapshot made from this WAV, once made. */
		snapshotId: integer('snapshot_id').references(() => snapshots.id),
		/** A model's document (notebook) instead of a job's file: the model key `make/model` ($lib/notebook/model-key). */
		modelKey: text('model_key')
	},
	(t) => [
		index('job_files_job_idx').on(t.jobId, t.uploadedAt),
		index('job_files_model_idx').on(t.modelKey, t.uploadedAt)
	]
);

/**
 * Where a snapshot's audio is: the blob store, by hash. Immutable like the snapshot (triggers). A
 * snapshot from before the store has its audio in `snapshot_audio` until the start-up migration
 * moves it here; the trigger on that table lets its row go only once this one exists.
 */
export const snapshotAudioBlobs = sqliteTable('snapshot_audio_blobs', {
	snapshotId: integer('snapshot_id')
		.primaryKey()
		.references(() => snapshots.id),
	sha256: text('sha256').notNull(),
	bytes: integer('bytes').notNull()
});

export type JobFile = typeof jobFiles.$inferSelect;

// ---- customer report ----

/**
 * A private link a customer opens without an account (the report today, an estimate later).
 * Only the SHA-256 of the token is stored; the token itself is shown once, when it is made.
 */
export const customerLinks = sqliteTable(
	'customer_links',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		purpose: text('purpose', { enum: ['report', 'estimate'] }).notNull(),
		tokenSha256: text('token_sha256').notNull().unique(),
		createdBy: text('created_by')
			.notNull()
			.references(() => users.id),
		createdAt: createdAt(),
		expiresAt: integer('expires_at', { mode: 'timestamp_ms' }).notNull(),
		revokedAt: integer('revoked_at', { mode: 'timestamp_ms' }),
		revokedBy: text('revoked_by').references(() => users.id)
	},
	(t) => [index('customer_links_job_idx').on(t.jobId)]
);

/** When a customer link was opened (nothing about who: no address, no agent). */
export const customerLinkViews = sqliteTable(
	'customer_link_views',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		linkId: integer('link_id')
			.notNull()
			.references(() => customerLinks.id, { onDelete: 'cascade' }),
		viewedAt: integer('viewed_at', { mode: 'timestamp_ms' }).notNull()
	},
	(t) => [index('customer_link_views_link_idx').on(t.linkId)]
);

// ---- estimates and payments ----

/**
 * Gapless invoice numbers: one counter row per year, incremented inside the transaction that
 * creates the invoice, so a rolled-back invoice gives its number back.
 */
export const invoiceCounters = sqliteTable('invoice_counters', {
	year: integer('year').primaryKey(),
	lastNumber: integer('last_number').notNull()
});

export const ESTIMATE_STATUSES = ['draft', 'sent', 'approved', 'declined', 'superseded'] as const;

/**
 * One version of a job's estimate. A draft is edited in place; sending freezes the lines, the
 * pricing (the shop's settings that day) and the exact document the customer will see (its
 * canonical JSON and SHA-256). After that only the status moves (triggers enforce it).
 */
export const estimates = sqliteTable(
	'estimates',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		version: integer('version').notNull(),
		status: text('status', { enum: ESTIMATE_STATUSES }).notNull().default('draft'),
		/** EstimateLineInput[] as drafted. */
		lines: text('lines', { mode: 'json' }).notNull(),
		/** A note to the customer printed under the lines. */
		note: text('note'),
		/** EstimatePricing frozen when sent (null while a draft: the current settings apply). */
		pricing: text('pricing', { mode: 'json' }),
		/** The canonical JSON of exactly what the customer is shown, and its SHA-256. */
		seenJson: text('seen_json'),
		seenSha256: text('seen_sha256'),
		createdBy: text('created_by')
			.notNull()
			.references(() => users.id),
		createdAt: createdAt(),
		updatedAt: updatedAt(),
		sentBy: text('sent_by').references(() => users.id),
		sentAt: integer('sent_at', { mode: 'timestamp_ms' })
	},
	(t) => [uniqueIndex('estimates_job_version_idx').on(t.jobId, t.version)]
);

/** The customer's answer to one sent estimate, from their private link. Never changed. */
export const estimateDecisions = sqliteTable('estimate_decisions', {
	id: integer('id').primaryKey({ autoIncrement: true }),
	estimateId: integer('estimate_id')
		.notNull()
		.unique()
		.references(() => estimates.id, { onDelete: 'cascade' }),
	linkId: integer('link_id').references(() => customerLinks.id),
	decision: text('decision', { enum: ['approve', 'decline'] }).notNull(),
	/** The name the customer typed. */
	typedName: text('typed_name').notNull(),
	reason: text('reason'),
	/** SHA-256 of the estimate document the customer's page showed. */
	seenSha256: text('seen_sha256').notNull(),
	decidedAt: integer('decided_at', { mode: 'timestamp_ms' }).notNull()
});

/** A hosted checkout the app asked the payment service for (deposit or balance). */
export const checkoutSessions = sqliteTable(
	'checkout_sessions',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		purpose: text('purpose', { enum: ['deposit', 'balance'] }).notNull(),
		estimateId: integer('estimate_id').references(() => estimates.id),
		providerSessionId: text('provider_session_id').notNull().unique(),
		url: text('url').notNull(),
		amountMinor: integer('amount_minor').notNull(),
		currency: text('currency').notNull(),
		status: text('status', { enum: ['open', 'paid', 'expired'] })
			.notNull()
			.default('open'),
		createdAt: createdAt(),
		closedAt: integer('closed_at', { mode: 'timestamp_ms' })
	},
	(t) => [index('checkout_sessions_job_idx').on(t.jobId)]
);

export const PAYMENT_METHODS = ['online', 'cash', 'card-terminal', 'bank-transfer'] as const;

/**
 * Money received (or refunded: a negative amount). Online payments are written only by a
 * verified webhook event; counter payments and refunds by staff. Never changed or deleted.
 */
export const payments = sqliteTable(
	'payments',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		jobId: integer('job_id')
			.notNull()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		kind: text('kind', { enum: ['deposit', 'payment', 'refund'] }).notNull(),
		method: text('method', { enum: PAYMENT_METHODS }).notNull(),
		amountMinor: integer('amount_minor').notNull(),
		currency: text('currency').notNull(),
		reference: text('reference'),
		checkoutSessionId: integer('checkout_session_id').references(() => checkoutSessions.id),
		providerEventId: text('provider_event_id').unique(),
		recordedBy: text('recorded_by').references(() => users.id),
		receivedAt: integer('received_at', { mode: 'timestamp_ms' }).notNull()
	},
	(t) => [index('payments_job_idx').on(t.jobId)]
);

/** Every payment-service event id seen once: a replayed event changes nothing. */
export const paymentEvents = sqliteTable('payment_events', {
	eventId: text('event_id').primaryKey(),
	type: text('type').notNull(),
	outcome: text('outcome').notNull(),
	receivedAt: integer('received_at', { mode: 'timestamp_ms' }).notNull()
});

/** The invoice of a job: a gapless number and the document as issued. Never changed. */
export const invoices = sqliteTable('invoices', {
	id: integer('id').primaryKey({ autoIncrement: true }),
	jobId: integer('job_id')
		.notNull()
		.unique()
		.references(() => jobs.id, { onDelete: 'cascade' }),
	number: text('number').notNull().unique(),
	estimateId: integer('estimate_id')
		.notNull()
		.references(() => estimates.id),
	/** The invoiced document (the approved estimate's lines and totals) as canonical JSON. */
	documentJson: text('document_json').notNull(),
	issuedBy: text('issued_by')
		.notNull()
		.references(() => users.id),
	issuedAt: integer('issued_at', { mode: 'timestamp_ms' }).notNull()
});

export type Estimate = typeof estimates.$inferSelect;
export type Payment = typeof payments.$inferSelect;

// ---- notebook ----

/**
 * Each job's model key (`make/model` as $lib/notebook/model-key makes it), so the notebook finds
 * every job on a model with an index. Filled in by the notebook service for jobs that have none;
 * a trigger in the migration drops a job's row when its make or model is edited.
 */
export const jobModelKeys = sqliteTable(
	'job_model_keys',
	{
		jobId: integer('job_id')
			.primaryKey()
			.references(() => jobs.id, { onDelete: 'cascade' }),
		modelKey: text('model_key').notNull()
	},
	(t) => [index('job_model_keys_key_idx').on(t.modelKey, t.jobId)]
);

/**
 * A model's adjustment notes (idle current, offset, what worked): the current text and its
 * version, raised by one on every save so a stale edit is refused.
 */
export const modelNotes = sqliteTable('model_notes', {
	modelKey: text('model_key').primaryKey(),
	/** The make and model as typed when the notes were first written (for display). */
	make: text('make').notNull(),
	model: text('model').notNull(),
	text: text('text').notNull(),
	version: integer('version').notNull(),
	updatedBy: text('updated_by').references(() => users.id),
	updatedAt: updatedAt()
});

/** Every saved version of a model's notes. Immutable (triggers). */
export const modelNoteVersions = sqliteTable(
	'model_note_versions',
	{
		id: integer('id').primaryKey({ autoIncrement: true }),
		modelKey: text('model_key').notNull(),
		version: integer('version').notNull(),
		text: text('text').notNull(),
		savedBy: text('saved_by').references(() => users.id),
		savedAt: integer('saved_at', { mode: 'timestamp_ms' }).notNull()
	},
	(t) => [index('model_note_versions_key_idx').on(t.modelKey, t.version)]
);

export type ModelNote = typeof modelNotes.$inferSelect;
export type ModelNoteVersion = typeof modelNoteVersions.$inferSelect;
