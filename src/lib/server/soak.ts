// Heat-soak runs in the database: create a run from a preset and the job's rating, store
// readings idempotently (run + probe + seq), record events, and end the run with a verdict the
// server computes from what it stored. Every write is one transaction.
import { and, asc, desc, eq, gt, sql } from 'drizzle-orm';
import { z } from 'zod';
import type { Db } from './db/open';
import * as table from './db/schema';
import { getJob } from './jobs';
import { PROBE_IDS, SOURCE_KINDS, TEMPS_KINDS } from '$lib/bridge/protocol';
import {
	computeDrive,
	customDriveSchema,
	PRESET_LABELS,
	SOAK_PRESET_IDS,
	type SoakChannel,
	type SoakPresetId
} from '$lib/soak/presets';
import { runLimits, soakLimitsPatchSchema, soakLimitsSchema, type SoakLimits } from '$lib/soak/soak-limits';
import { DomainError } from './errors';
import { getSetting } from './settings';
import {
	summarize,
	verdictOf,
	soakSeconds,
	type SoakReadingIn,
	type SoakSummary,
	type ThdnSample
} from '$lib/soak/verdict';
import type {
	SoakEventView,
	SoakRunDetail,
	SoakRunListItem,
	SoakRunView,
	SoakVerdict
} from '$lib/soak/types';
export type { SoakEventView, SoakRunDetail, SoakRunListItem, SoakRunView, SoakVerdict };

export const CELSIUS_MIN = -50;
export const CELSIUS_MAX = 400;
export const READINGS_MAX_PER_BATCH = 5000;
export const READINGS_BODY_MAX_BYTES = 1024 * 1024;
/**
 * The fastest simulator thermal time the server accepts: at ×120 the hour-long preset takes
 * 30 s, enough for a demo, while a faster clock would turn the record into a handful of readings.
 */
export const MAX_ACCELERATED_TIME_SCALE = 120;
/**
 * Wall time past a run's planned end after which the server closes it itself (the page that
 * should have finished it is gone), so an abandoned run cannot block the job's next soak.
 */
export const OVERDUE_GRACE_MS = 10 * 60 * 1000;

// ── inputs ───────────────────────────────────────────────────────────────────

export const createRunSchema = z
	.object({
		preset: z.enum(SOAK_PRESET_IDS),
		/** Required for the custom preset: watts or volts into the load, frequency, duration, channels. */
		custom: customDriveSchema.optional(),
		/** Any limit not given comes from the shop's `soakDefaultLimits`. */
		limits: soakLimitsPatchSchema.optional(),
		probes: z.array(z.enum(PROBE_IDS)).min(1).max(PROBE_IDS.length).optional(),
		/** What the page saw of the bridge at start; optional so `{ preset }` alone works. */
		bridge: z
			.object({
				bootId: z.string().max(64).optional(),
				lastSeq: z.number().int().min(-1).nullable().optional(),
				/** The hello's audio source and temperature source: only the simulator may run accelerated. */
				source: z.enum(SOURCE_KINDS).optional(),
				temps: z.enum(TEMPS_KINDS).optional(),
				timeScale: z.number().positive().max(MAX_ACCELERATED_TIME_SCALE).optional()
			})
			.strict()
			.optional()
	})
	.strict();
export type CreateRunInput = z.infer<typeof createRunSchema>;

export const readingsBodySchema = z
	.object({
		readings: z.array(z.unknown()).min(1).max(READINGS_MAX_PER_BATCH),
		/** The bridge boot the readings came from, when not given per reading. */
		bootId: z.string().max(64).optional()
	})
	.strict();

const at = z.number().int().min(0).max(8.64e15);
const key = z.string().min(1).max(80).optional();
export const eventSchema = z.discriminatedUnion('kind', [
	z
		.object({
			kind: z.literal('gap'),
			at,
			key,
			detail: z
				.object({
					reason: z.enum(['bridge-restart', 'disconnected', 'history-lost']),
					fromT: z.number().nullable().optional(),
					toT: z.number().nullable().optional(),
					fromSeq: z.number().int().nullable().optional(),
					toSeq: z.number().int().nullable().optional(),
					fromBootId: z.string().max(64).nullable().optional(),
					toBootId: z.string().max(64).nullable().optional()
				})
				.strict()
		})
		.strict(),
	z
		.object({
			kind: z.literal('thdn'),
			at,
			key,
			detail: z
				.object({
					thdnPercent: z.number().min(0).max(1000),
					outputW: z.number().min(0).max(100_000).nullable().optional(),
					outputVrms: z.number().min(0).max(1000).nullable().optional(),
					channel: z.enum(['left', 'right']).optional()
				})
				.strict()
		})
		.strict(),
	z
		.object({
			kind: z.literal('generator'),
			at,
			key,
			detail: z
				.object({
					state: z.enum(['on', 'off']),
					levelVrms: z.number().min(0).max(100).optional(),
					frequencyHz: z.number().min(0).max(100_000).optional(),
					note: z.string().max(300).optional()
				})
				.strict()
		})
		.strict(),
	z
		.object({
			kind: z.literal('note'),
			at,
			key,
			detail: z.object({ text: z.string().min(1).max(1000) }).strict()
		})
		.strict()
]);
export type SoakEventInput = z.infer<typeof eventSchema>;
export const eventsBodySchema = z.object({ events: z.array(eventSchema).min(1).max(500) }).strict();

export const breachSchema = z
	.object({
		kind: z.enum(['max-heatsink', 'rise-rate', 'left-right', 'thdn']),
		probe: z.string().max(80),
		t: z.number(),
		atS: z.number().optional(),
		value: z.number(),
		limit: z.number(),
		message: z.string().max(500)
	})
	.strict();

export const abortSchema = z
	.object({
		reason: z.string().trim().min(1).max(500),
		/** The moment the run ended (a breach's reading time), ms since the epoch; default now. */
		at: z.number().int().min(0).optional(),
		breach: breachSchema.optional()
	})
	.strict();
export type AbortInput = z.infer<typeof abortSchema>;

// ── views ────────────────────────────────────────────────────────────────────

type RunRow = typeof table.soakRuns.$inferSelect;

function runView(row: RunRow, createdByName: string | null = null): SoakRunView {
	return {
		id: row.id,
		jobId: row.jobId,
		createdBy: row.createdBy,
		createdByName,
		preset: row.preset as SoakPresetId,
		presetLabel: PRESET_LABELS[row.preset as SoakPresetId] ?? row.preset,
		frequencyHz: row.frequencyHz,
		loadOhms: row.loadOhms,
		drivePowerW: row.drivePowerW,
		driveVrms: row.driveVrms,
		durationS: row.durationS,
		channels: row.channels as SoakChannel[],
		probes: row.probes as string[],
		timeScale: row.timeScale,
		startSeq: row.startSeq,
		status: row.status,
		startedAt: row.startedAt.getTime(),
		endedAt: row.endedAt ? row.endedAt.getTime() : null,
		abortReason: row.abortReason
	};
}

/** Stored limits are validated on the way out; a row that no longer validates is judged by the shop defaults it lacks. */
function limitsOf(row: RunRow): SoakLimits {
	const parsed = soakLimitsSchema.safeParse(row.limits);
	if (parsed.success) return parsed.data;
	const partial = soakLimitsPatchSchema.safeParse(row.limits);
	return runLimits(undefined, partial.success ? partial.data : {});
}

// ── helpers ──────────────────────────────────────────────────────────────────

type Tx = Pick<Db, 'select' | 'insert' | 'update'>;

function getRow(db: Tx, runId: number): RunRow {
	const row = db.select().from(table.soakRuns).where(eq(table.soakRuns.id, runId)).get();
	if (!row) throw new DomainError('not-found', 'No such soak run');
	return row;
}

/** The columns a reading is read back with (verdict input and backfill alike). */
const readingColumns = {
	probe: table.soakReadings.probe,
	seq: table.soakReadings.seq,
	t: table.soakReadings.t,
	celsius: table.soakReadings.celsius,
	bootId: table.soakReadings.bootId
};

function storedReadings(db: Tx, runId: number): SoakReadingIn[] {
	return db
		.select(readingColumns)
		.from(table.soakReadings)
		.where(eq(table.soakReadings.runId, runId))
		.orderBy(asc(table.soakReadings.seq))
		.all();
}

function thdnSamples(db: Tx, runId: number): ThdnSample[] {
	const rows = db
		.select({ at: table.soakEvents.at, detail: table.soakEvents.detail })
		.from(table.soakEvents)
		.where(and(eq(table.soakEvents.runId, runId), eq(table.soakEvents.kind, 'thdn')))
		.all();
	const out: ThdnSample[] = [];
	for (const r of rows) {
		const d = r.detail as { thdnPercent?: unknown; channel?: unknown } | null;
		if (d && typeof d.thdnPercent === 'number')
			out.push({
				t: r.at.getTime(),
				thdnPercent: d.thdnPercent,
				channel: typeof d.channel === 'string' ? d.channel : undefined
			});
	}
	return out;
}

/**
 * The summary of what is stored, judged up to `untilMs` (the planned end for a finished run, the
 * abort moment for an aborted one): readings the bridge logged after that are kept but not judged.
 */
function computeSummary(db: Tx, row: RunRow, end?: { untilMs: number; complete: boolean }): SoakSummary {
	const startedAtMs = row.startedAt.getTime();
	const clock = { startedAtMs, timeScale: row.timeScale };
	const untilMs = end ? end.untilMs : Infinity;
	const readings = storedReadings(db, row.id).filter((r) => r.t <= untilMs);
	const thdn = thdnSamples(db, row.id).filter((x) => x.t <= untilMs);
	return summarize(readings, limitsOf(row), clock, thdn, end?.complete ? { durationS: row.durationS } : {});
}

/** Wall-clock ms at which a run's planned duration ends. */
function plannedEndMs(row: RunRow): number {
	return row.startedAt.getTime() + (row.durationS * 1000) / row.timeScale;
}

function readingStats(db: Tx, runId: number): { count: number; lastSeq: number | null } {
	const r = db
		.select({ count: sql<number>`count(*)`, lastSeq: sql<number | null>`max(${table.soakReadings.seq})` })
		.from(table.soakReadings)
		.where(eq(table.soakReadings.runId, runId))
		.get();
	return { count: r?.count ?? 0, lastSeq: r?.lastSeq ?? null };
}

/**
 * Finish every run (of one job, or one run) still `running` more than the grace period past its
 * planned end by the wall clock: the verdict comes from what is stored, judged to the planned
 * end (a record that stops short fails as incomplete), and an event says the server closed it.
 */
function closeOverdueRuns(db: Db, where: { jobId: number } | { runId: number }, nowMs: number): void {
	const rows = db
		.select()
		.from(table.soakRuns)
		.where(
			and(
				'jobId' in where ? eq(table.soakRuns.jobId, where.jobId) : eq(table.soakRuns.id, where.runId),
				eq(table.soakRuns.status, 'running')
			)
		)
		.all();
	for (const stale of rows) {
		if (nowMs <= plannedEndMs(stale) + OVERDUE_GRACE_MS) continue;
		db.transaction((tx) => {
			// Read again inside the transaction: the page may have finished it meanwhile.
			const row = getRow(tx, stale.id);
			if (row.status !== 'running') return;
			const endMs = plannedEndMs(row);
			const summary = computeSummary(tx, row, { untilMs: endMs, complete: true });
			const verdict = verdictOf(summary);
			tx.insert(table.soakEvents)
				.values({
					runId: row.id,
					kind: 'server-closed',
					at: new Date(nowMs),
					detail: {
						text: `Closed by the server ${Math.round((nowMs - endMs) / 60_000)} min after the planned end: no page finished the run. Verdict from the stored readings: ${verdict}.`,
						plannedEndMs: endMs
					}
				})
				.run();
			tx.update(table.soakRuns)
				.set({ status: verdict, endedAt: new Date(Math.round(endMs)), summary })
				.where(eq(table.soakRuns.id, row.id))
				.run();
		});
	}
}

// ── service ──────────────────────────────────────────────────────────────────

/** Start a run on a job. One running soak per job at a time. */
export function createRun(
	db: Db,
	jobId: number,
	userId: string,
	input: CreateRunInput,
	nowMs = Date.now()
): { id: number } {
	const data = createRunSchema.parse(input);
	const job = getJob(db, jobId);
	if (!job) throw new DomainError('not-found', 'No such job');
	const drive = computeDrive(
		data.preset,
		{ ratedPowerW: job.ratedPowerW, ratedLoadOhms: job.ratedLoadOhms },
		data.custom
	);
	if (!drive.ok) throw new DomainError('invalid', drive.message);
	const timeScale = data.bridge?.timeScale ?? 1;
	const simulated =
		data.bridge?.source === 'sim' && (data.bridge.temps === undefined || data.bridge.temps === 'sim');
	// Real hardware heats in real time: only the simulator's thermal model may run faster, so a
	// browser cannot pass an hour's soak in a minute by claiming a time scale.
	if (timeScale !== 1 && !simulated)
		throw new DomainError(
			'invalid',
			'A time scale other than 1 is only accepted from the bridge simulator (source and temperatures "sim")'
		);
	closeOverdueRuns(db, { jobId }, nowMs);
	const limits = runLimits(getSetting(db, 'soakDefaultLimits'), data.limits ?? {});
	return db.transaction((tx) => {
		const running = tx
			.select({ id: table.soakRuns.id })
			.from(table.soakRuns)
			.where(and(eq(table.soakRuns.jobId, jobId), eq(table.soakRuns.status, 'running')))
			.get();
		if (running) throw new DomainError('conflict', `Soak run ${running.id} is still running on this job`);
		const row = tx
			.insert(table.soakRuns)
			.values({
				jobId,
				createdBy: userId,
				preset: drive.drive.preset,
				frequencyHz: drive.drive.frequencyHz,
				loadOhms: drive.drive.loadOhms,
				drivePowerW: drive.drive.drivePowerW,
				driveVrms: drive.drive.driveVrms,
				durationS: drive.drive.durationS,
				channels: drive.drive.channels,
				limits,
				probes: data.probes ? [...new Set(data.probes)] : [...PROBE_IDS],
				timeScale,
				startSeq: data.bridge?.lastSeq ?? null,
				status: 'running',
				startedAt: new Date(nowMs)
			})
			.returning({ id: table.soakRuns.id })
			.get();
		// What the page said of the bridge, kept with the run: the source behind the time scale.
		tx.insert(table.soakEvents)
			.values({
				runId: row.id,
				kind: 'start',
				at: new Date(nowMs),
				detail: {
					source: data.bridge?.source ?? null,
					temps: data.bridge?.temps ?? null,
					bootId: data.bridge?.bootId ?? null,
					timeScale
				}
			})
			.run();
		return { id: row.id };
	});
}

export function listRuns(db: Db, jobId: number, nowMs = Date.now(), thumbPoints = 48): SoakRunListItem[] {
	closeOverdueRuns(db, { jobId }, nowMs);
	const rows = db
		.select({ run: table.soakRuns, name: table.users.name })
		.from(table.soakRuns)
		.leftJoin(table.users, eq(table.users.id, table.soakRuns.createdBy))
		.where(eq(table.soakRuns.jobId, jobId))
		.orderBy(desc(table.soakRuns.startedAt), desc(table.soakRuns.id))
		.all();
	return rows.map(({ run, name }) => {
		const view = runView(run, name);
		const startedAtMs = view.startedAt;
		// Bucket width in bridge milliseconds so the whole planned duration spans the thumbnail.
		const bucketMs = Math.max(1, Math.ceil((view.durationS * 1000) / view.timeScale / thumbPoints));
		const agg = db
			.select({
				probe: table.soakReadings.probe,
				bucket: sql<number>`cast((${table.soakReadings.t} - ${startedAtMs}) / ${bucketMs} as integer)`,
				meanC: sql<number>`avg(${table.soakReadings.celsius})`,
				maxC: sql<number>`max(${table.soakReadings.celsius})`
			})
			.from(table.soakReadings)
			.where(eq(table.soakReadings.runId, run.id))
			.groupBy(sql`1, 2`)
			.orderBy(sql`2`)
			.all();
		// Every bucket from the first to the last, so a stretch without readings breaks the line.
		const present = agg.map((a) => a.bucket);
		const first = present.length ? Math.min(...present) : 0;
		const last = present.length ? Math.max(...present) : -1;
		const buckets = Array.from({ length: Math.max(0, last - first + 1) }, (_, i) => first + i);
		const index = new Map(buckets.map((b, i) => [b, i]));
		const probes: Record<string, (number | null)[]> = {};
		const maxC: Record<string, number> = {};
		for (const a of agg) {
			(probes[a.probe] ??= buckets.map(() => null))[index.get(a.bucket) as number] = a.meanC;
			maxC[a.probe] = Math.max(maxC[a.probe] ?? -Infinity, a.maxC);
		}
		const minutes = buckets.map(
			(b) => soakSeconds(startedAtMs + (b + 0.5) * bucketMs, { startedAtMs, timeScale: view.timeScale }) / 60
		);
		return {
			run: view,
			verdict: view.status === 'running' ? null : view.status,
			maxC,
			thumb: { minutes, probes }
		};
	});
}

export function getRunDetail(db: Db, runId: number, nowMs = Date.now()): SoakRunDetail {
	closeOverdueRuns(db, { runId }, nowMs);
	const found = db
		.select({ run: table.soakRuns, name: table.users.name })
		.from(table.soakRuns)
		.leftJoin(table.users, eq(table.users.id, table.soakRuns.createdBy))
		.where(eq(table.soakRuns.id, runId))
		.get();
	if (!found) throw new DomainError('not-found', 'No such soak run');
	const row = found.run;
	const stats = readingStats(db, runId);
	const stored = row.summary as SoakSummary | null;
	const events = db
		.select({
			id: table.soakEvents.id,
			kind: table.soakEvents.kind,
			at: table.soakEvents.at,
			detail: table.soakEvents.detail
		})
		.from(table.soakEvents)
		.where(eq(table.soakEvents.runId, runId))
		.orderBy(asc(table.soakEvents.at), asc(table.soakEvents.id))
		.all()
		.map((e) => ({ ...e, at: e.at.getTime() }));
	return {
		run: runView(row, found.name),
		limits: limitsOf(row),
		readingCount: stats.count,
		lastSeq: stats.lastSeq,
		verdict: row.status === 'running' ? null : row.status,
		summary: row.status !== 'running' && stored ? stored : computeSummary(db, row),
		events
	};
}

export function jobIdOfRun(db: Db, runId: number): number {
	return getRow(db, runId).jobId;
}

/** The id of the job's running soak, if any: the page resumes it. */
export function runningRunId(db: Db, jobId: number, nowMs = Date.now()): number | null {
	closeOverdueRuns(db, { jobId }, nowMs);
	const r = db
		.select({ id: table.soakRuns.id })
		.from(table.soakRuns)
		.where(and(eq(table.soakRuns.jobId, jobId), eq(table.soakRuns.status, 'running')))
		.get();
	return r?.id ?? null;
}

export interface RejectedReading {
	index: number;
	probe: unknown;
	seq: unknown;
	reason: string;
}

export interface AddReadingsResult {
	/** Readings new to the database. */
	stored: number;
	/** Valid readings that were already stored (a repeated upload). */
	duplicates: number;
	rejected: RejectedReading[];
	lastSeq: number | null;
	readingCount: number;
}

function checkReading(
	raw: unknown,
	probes: ReadonlySet<string>
): { ok: true } | { ok: false; reason: string } {
	if (typeof raw !== 'object' || raw === null || Array.isArray(raw))
		return { ok: false, reason: 'not an object' };
	const r = raw as Record<string, unknown>;
	if (typeof r.probe !== 'string' || !probes.has(r.probe))
		return { ok: false, reason: `unknown probe ${JSON.stringify(r.probe)}` };
	if (typeof r.seq !== 'number' || !Number.isSafeInteger(r.seq) || r.seq < 0)
		return { ok: false, reason: 'seq must be a non-negative integer' };
	if (typeof r.t !== 'number' || !Number.isFinite(r.t) || r.t < 0)
		return { ok: false, reason: 't must be ms since the epoch' };
	if (typeof r.celsius !== 'number' || !Number.isFinite(r.celsius))
		return { ok: false, reason: 'celsius is not a number' };
	if (r.celsius < CELSIUS_MIN || r.celsius > CELSIUS_MAX)
		return { ok: false, reason: `celsius ${r.celsius} out of range (${CELSIUS_MIN} to ${CELSIUS_MAX} °C)` };
	if (r.bootId !== undefined && r.bootId !== null && (typeof r.bootId !== 'string' || r.bootId.length > 64))
		return { ok: false, reason: 'bootId must be a string' };
	return { ok: true };
}

/**
 * Store a batch of readings. Valid readings are stored (INSERT OR IGNORE on run + probe + seq,
 * so a repeated upload is harmless) even when others in the batch are rejected; the rejected
 * ones are named in the answer. A run that has ended takes no more readings.
 */
export function addReadings(
	db: Db,
	runId: number,
	readings: readonly unknown[],
	batchBootId?: string
): AddReadingsResult {
	return db.transaction((tx) => {
		const row = getRow(tx, runId);
		if (row.status !== 'running')
			throw new DomainError('conflict', `The run has ended (${row.status}); it takes no more readings`);
		const probes = new Set(row.probes as string[]);
		const rejected: RejectedReading[] = [];
		const valid: (typeof table.soakReadings.$inferInsert)[] = [];
		readings.forEach((raw, index) => {
			const check = checkReading(raw, probes);
			const r = (typeof raw === 'object' && raw !== null ? raw : {}) as Record<string, unknown>;
			if (!check.ok) {
				rejected.push({ index, probe: r.probe ?? null, seq: r.seq ?? null, reason: check.reason });
				return;
			}
			valid.push({
				runId,
				probe: r.probe as string,
				seq: r.seq as number,
				t: Math.round(r.t as number),
				celsius: r.celsius as number,
				bootId: (r.bootId as string | undefined) ?? batchBootId ?? null
			});
		});
		let stored = 0;
		for (let i = 0; i < valid.length; i += 1000) {
			const res = tx
				.insert(table.soakReadings)
				.values(valid.slice(i, i + 1000))
				.onConflictDoNothing()
				.run();
			stored += res.changes;
		}
		const stats = readingStats(tx, runId);
		return {
			stored,
			duplicates: valid.length - stored,
			rejected,
			lastSeq: stats.lastSeq,
			readingCount: stats.count
		};
	});
}

export function readingsAfter(
	db: Db,
	runId: number,
	afterSeq: number,
	limit = 5000
): { readings: (SoakReadingIn & { bootId: string | null })[]; lastSeq: number | null; more: boolean } {
	getRow(db, runId);
	const rows = db
		.select(readingColumns)
		.from(table.soakReadings)
		.where(and(eq(table.soakReadings.runId, runId), gt(table.soakReadings.seq, afterSeq)))
		.orderBy(asc(table.soakReadings.seq), asc(table.soakReadings.probe))
		.limit(limit + 1)
		.all();
	const more = rows.length > limit;
	const page = more ? rows.slice(0, limit) : rows;
	return { readings: page, lastSeq: page.length ? page[page.length - 1].seq : null, more };
}

/**
 * Record events. A `key` makes a retried upload harmless (same run, kind and key is stored
 * once). THD+N samples count toward the verdict, so they are refused once the run has ended.
 */
export function addEvents(
	db: Db,
	runId: number,
	events: readonly SoakEventInput[]
): { stored: number; duplicates: number } {
	return db.transaction((tx) => {
		const row = getRow(tx, runId);
		if (row.status !== 'running' && events.some((e) => e.kind === 'thdn' || e.kind === 'gap'))
			throw new DomainError('conflict', `The run has ended (${row.status}); it takes no more measurements`);
		let stored = 0;
		for (const e of events) {
			if (e.key) {
				const dup = tx
					.select({ id: table.soakEvents.id })
					.from(table.soakEvents)
					.where(
						and(
							eq(table.soakEvents.runId, runId),
							eq(table.soakEvents.kind, e.kind),
							sql`json_extract(${table.soakEvents.detail}, '$.key') = ${e.key}`
						)
					)
					.get();
				if (dup) continue;
			}
			tx.insert(table.soakEvents)
				.values({
					runId,
					kind: e.kind,
					at: new Date(e.at),
					detail: e.key ? { ...e.detail, key: e.key } : e.detail
				})
				.run();
			stored++;
		}
		return { stored, duplicates: events.length - stored };
	});
}

/** Seconds of soak time the run still needs, by the server's clock. */
export function remainingS(
	run: Pick<SoakRunView, 'startedAt' | 'timeScale' | 'durationS'>,
	nowMs = Date.now()
): number {
	return run.durationS - soakSeconds(nowMs, { startedAtMs: run.startedAt, timeScale: run.timeScale });
}

/**
 * End a run that reached its duration: the verdict comes from the stored readings and THD+N
 * samples (passed, or failed on any breach), never from what a browser claimed.
 */
export function finishRun(db: Db, runId: number, nowMs = Date.now()): SoakRunDetail {
	db.transaction((tx) => {
		const row = getRow(tx, runId);
		if (row.status !== 'running')
			throw new DomainError('conflict', `The run has already ended (${row.status})`);
		// Two wall-clock seconds of slack for the page's and the server's clocks.
		const left = remainingS(
			{ startedAt: row.startedAt.getTime(), timeScale: row.timeScale, durationS: row.durationS },
			nowMs
		);
		if (left > 2 * row.timeScale)
			throw new DomainError(
				'conflict',
				`The run has ${Math.ceil(left / 60)} min of soak time left; abort it to stop early`
			);
		const summary = computeSummary(tx, row, { untilMs: plannedEndMs(row), complete: true });
		tx.update(table.soakRuns)
			.set({ status: verdictOf(summary), endedAt: new Date(nowMs), summary })
			.where(eq(table.soakRuns.id, runId))
			.run();
	});
	return getRunDetail(db, runId, nowMs);
}

/** End a run early: a breach seen by the page, or the technician stopping it. */
export function abortRun(db: Db, runId: number, input: AbortInput, nowMs = Date.now()): SoakRunDetail {
	const data = abortSchema.parse(input);
	db.transaction((tx) => {
		const row = getRow(tx, runId);
		if (row.status !== 'running')
			throw new DomainError('conflict', `The run has already ended (${row.status})`);
		// The moment may not precede the start nor lie in the future.
		const endedAtMs = Math.min(nowMs, Math.max(row.startedAt.getTime(), data.at ?? nowMs));
		const summary = computeSummary(tx, row, { untilMs: endedAtMs, complete: false });
		if (data.breach) {
			tx.insert(table.soakEvents)
				.values({ runId, kind: 'breach', at: new Date(Math.round(data.breach.t)), detail: data.breach })
				.run();
		}
		tx.insert(table.soakEvents)
			.values({ runId, kind: 'abort', at: new Date(endedAtMs), detail: { reason: data.reason } })
			.run();
		tx.update(table.soakRuns)
			.set({ status: 'aborted', endedAt: new Date(endedAtMs), abortReason: data.reason, summary })
			.where(eq(table.soakRuns.id, runId))
			.run();
	});
	return getRunDetail(db, runId, nowMs);
}
