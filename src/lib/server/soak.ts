// Heat-soak runs in the database: create a run from a preset and the job's rating, store
// readings idempotently (run + probe + seq) and fold them into the run's summary and chart as
// they arrive (soak-summary.ts), record events, and end the run with a verdict the server takes
// from what it stored. Every write is one transaction.
import { audit } from './audit';
import { and, asc, desc, eq, gt, inArray, sql } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import { assertJobOpen, getJob } from './jobs';
import { assertBenchPowerAllowed } from './worksheets';
import { PROBE_IDS } from '$lib/bridge/protocol';
import {
	computeDrive,
	fixedPreset,
	needsHeatConfirmation,
	PRESET_LABELS,
	ratingBasisProblem,
	type SoakChannel,
	type SoakPresetId
} from '$lib/soak/presets';
import { runLimits, soakLimitsPatchSchema, soakLimitsSchema, type SoakLimits } from '$lib/soak/soak-limits';
import { DomainError } from './errors';
import { getSetting } from './settings';
import {
	soakSeconds,
	verdictOf,
	type SoakReadingIn,
	type SoakSummary,
	type ThdnSample
} from '$lib/soak/verdict';
import { SERIES_BUCKETS, seriesOf, type SeriesBucketRow } from '$lib/soak/series';
import {
	CELSIUS_MAX,
	CELSIUS_MIN,
	MAX_ACCELERATED_TIME_SCALE,
	abortSchema,
	createRunSchema,
	type AbortInput,
	type CreateRunInput,
	type SoakEventInput
} from '$lib/schemas/soak';
import {
	closeSummary,
	emptySummary,
	foldReadings,
	foldThdn,
	plannedEndMs,
	rebuildSummary,
	seriesRunOf,
	type SummaryState
} from './soak-summary';
import type {
	SoakEventView,
	SoakRunDetail,
	SoakRunListItem,
	SoakRunView,
	SoakVerdict
} from '$lib/soak/types';
export type { SoakEventView, SoakRunDetail, SoakRunListItem, SoakRunView, SoakVerdict };
export { plannedEndMs };

export {
	CELSIUS_MAX,
	CELSIUS_MIN,
	MAX_ACCELERATED_TIME_SCALE,
	READINGS_BODY_MAX_BYTES,
	READINGS_MAX_PER_BATCH,
	abortSchema,
	breachSchema,
	createRunSchema,
	eventSchema,
	eventsBodySchema,
	readingsBodySchema,
	type AbortInput,
	type CreateRunInput,
	type SoakEventInput
} from '$lib/schemas/soak';
/**
 * Wall time past a run's planned end after which the server closes it itself (the page that
 * should have finished it is gone), so an abandoned run cannot block the job's next soak.
 */
export const OVERDUE_GRACE_MS = 10 * 60 * 1000;
/**
 * How far a reading's bridge time may lie before the run's start or after the server's now:
 * the bridge's and the server's clocks differ a little, and the first readings of a run may
 * have been logged just before the server stored its start.
 */
export const READING_CLOCK_SLACK_MS = 2 * 60 * 1000;

// ── views

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

type Tx = Pick<Db, 'select' | 'insert' | 'update' | 'delete'>;

function getRow(db: Tx, runId: number): RunRow {
	const row = db.select().from(table.soakRuns).where(eq(table.soakRuns.id, runId)).get();
	if (!row) throw new DomainError('not-found', 'No such soak run');
	return row;
}

/** The columns a reading is read back with. */
const readingColumns = {
	probe: table.soakReadings.probe,
	seq: table.soakReadings.seq,
	t: table.soakReadings.t,
	celsius: table.soakReadings.celsius,
	bootId: table.soakReadings.bootId
};

/**
 * The run's stored summary and its bookkeeping. A running run stored before the summary was
 * kept incrementally has none: it is rebuilt from its readings once and stored.
 */
function liveOf(tx: Tx, row: RunRow): { summary: SoakSummary; state: SummaryState } {
	const state = row.summaryState as SummaryState | null;
	if (state && row.summary) return { summary: row.summary as SoakSummary, state };
	if (row.status !== 'running' && row.summary) {
		// An ended run from before: its summary is final; count what is stored once.
		const r = tx
			.select({ count: sql<number>`count(*)`, lastSeq: sql<number | null>`max(${table.soakReadings.seq})` })
			.from(table.soakReadings)
			.where(eq(table.soakReadings.runId, row.id))
			.get();
		return {
			summary: row.summary as SoakSummary,
			state: { readingCount: r?.count ?? 0, lastSeq: r?.lastSeq ?? null }
		};
	}
	if (!state && row.status === 'running') {
		const rebuilt = rebuildSummary(tx, row, limitsOf(row));
		tx.update(table.soakRuns)
			.set({ summary: rebuilt.summary, summaryState: rebuilt.state })
			.where(eq(table.soakRuns.id, row.id))
			.run();
		return rebuilt;
	}
	return {
		summary: (row.summary as SoakSummary | null) ?? emptySummary(),
		state: state ?? { readingCount: 0, lastSeq: null }
	};
}

/**
 * How a run ends from its stored summary: a limit breach is a failed run with the breach as the
 * reason; a record that stops short of a completed run's duration fails too.
 */
function endingOf(summary: SoakSummary): { status: 'passed' | 'failed'; reason: string | null } {
	const first = summary.breaches[0];
	if (first) return { status: 'failed', reason: `Limit breached: ${first.message}` };
	if (summary.incomplete)
		return { status: 'failed', reason: 'The record stops short of the planned duration' };
	return { status: verdictOf(summary), reason: null };
}

/**
 * Finish every run (of one job, or one run) still `running` more than the grace period past its
 * planned end by the wall clock: the verdict comes from the stored summary, judged to the
 * planned end (a record that stops short fails as incomplete), and an event says the server closed it.
 */
function closeOverdueRuns(db: Db, where: { jobId: number } | { runId: number }, nowMs: number): void {
	const rows = db
		.select({
			id: table.soakRuns.id,
			startedAt: table.soakRuns.startedAt,
			durationS: table.soakRuns.durationS,
			timeScale: table.soakRuns.timeScale
		})
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
			const live = liveOf(tx, row);
			const summary = closeSummary(live.summary, row.durationS, true);
			const ending = endingOf(summary);
			tx.insert(table.soakEvents)
				.values({
					runId: row.id,
					kind: 'server-closed',
					at: new Date(nowMs),
					detail: {
						text: `Closed by the server ${Math.round((nowMs - endMs) / 60_000)} min after the planned end: no page finished the run. Verdict from the stored readings: ${ending.status}.`,
						plannedEndMs: endMs
					}
				})
				.run();
			tx.update(table.soakRuns)
				.set({
					status: ending.status,
					endedAt: new Date(Math.round(endMs)),
					summary,
					abortReason: ending.reason
				})
				.where(eq(table.soakRuns.id, row.id))
				.run();
			audit(tx, {
				actorId: null,
				action: 'soak.ended',
				jobId: row.jobId,
				subject: `soak run #${row.id}`,
				detail: { status: ending.status, reason: ending.reason, by: 'server (overdue)' }
			});
		});
	}
}

function seriesRows(db: Tx, runIds: readonly number[]): Map<number, SeriesBucketRow[]> {
	const out = new Map<number, SeriesBucketRow[]>();
	if (!runIds.length) return out;
	const rows = db
		.select({
			runId: table.soakSeries.runId,
			probe: table.soakSeries.probe,
			bucket: table.soakSeries.bucket,
			n: table.soakSeries.n,
			sumC: table.soakSeries.sumC,
			minC: table.soakSeries.minC,
			maxC: table.soakSeries.maxC
		})
		.from(table.soakSeries)
		.where(inArray(table.soakSeries.runId, [...runIds]))
		.all();
	for (const r of rows) {
		let list = out.get(r.runId);
		if (!list) out.set(r.runId, (list = []));
		list.push(r);
	}
	return out;
}

// ── service ──────────────────────────────────────────────────────────────────

/** Start a run on a job. One running soak per job at a time; a signed-off job takes none. */
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
	// A long-stored unit gets full mains and drive only after its limited first power-up.
	assertBenchPowerAllowed(db, jobId, 'soak run');
	const basisProblem = data.preset === 'custom' ? null : ratingBasisProblem(job.ratedPowerBasis);
	if (basisProblem)
		throw new DomainError('invalid', basisProblem, [{ path: 'preset', message: basisProblem }]);
	const drive = computeDrive(
		data.preset,
		{ ratedPowerW: job.ratedPowerW, ratedLoadOhms: job.ratedLoadOhms },
		data.custom
	);
	if (!drive.ok) throw new DomainError('invalid', drive.message);
	if (
		needsHeatConfirmation(data.preset, { year: job.year, unrestored: job.unrestored }) &&
		data.confirmHeat !== true
	)
		throw new DomainError(
			'invalid',
			`Confirm the one-third-power caution first (send confirmHeat: true): ${fixedPreset(data.preset)?.caution ?? ''}`,
			[
				{
					path: 'confirmHeat',
					message: job.unrestored
						? 'required for one-third power on a unit marked unrestored'
						: `required for one-third power on a unit made before 1974 (this one: ${job.year})`
				}
			]
		);
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
	if (timeScale > MAX_ACCELERATED_TIME_SCALE)
		throw new DomainError('invalid', `A time scale above ×${MAX_ACCELERATED_TIME_SCALE} is not accepted`);
	closeOverdueRuns(db, { jobId }, nowMs);
	const limits = runLimits(getSetting(db, 'soakDefaultLimits'), data.limits ?? {});
	return db.transaction((tx) => {
		// A signed-off job is a finished record: no new soak on it (409) until it is reopened.
		assertJobOpen(tx, jobId);
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
				startedAt: new Date(nowMs),
				summary: emptySummary(),
				summaryState: { readingCount: 0, lastSeq: null } satisfies SummaryState
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
		audit(tx, {
			actorId: userId,
			action: 'soak.started',
			jobId,
			subject: `soak run #${row.id}`,
			detail: {
				preset: drive.drive.preset,
				drivePowerW: drive.drive.drivePowerW,
				durationS: drive.drive.durationS,
				timeScale
			}
		});
		return { id: row.id };
	});
}

/** Points in a job-page thumbnail: the stored chart's buckets merged this many at a time. */
const THUMB_FACTOR = Math.ceil(SERIES_BUCKETS / 48);

/**
 * A job's runs, newest first, each with its counts and a thumbnail read from the stored
 * summary and chart: a bounded amount of work per run, however many readings it holds.
 */
export function listRuns(db: Db, jobId: number, nowMs = Date.now()): SoakRunListItem[] {
	closeOverdueRuns(db, { jobId }, nowMs);
	const rows = db
		.select({ run: table.soakRuns, name: table.users.name })
		.from(table.soakRuns)
		.leftJoin(table.users, eq(table.users.id, table.soakRuns.createdBy))
		.where(eq(table.soakRuns.jobId, jobId))
		.orderBy(desc(table.soakRuns.startedAt), desc(table.soakRuns.id))
		.all();
	const series = seriesRows(
		db,
		rows.map((r) => r.run.id)
	);
	return rows.map(({ run, name }) => {
		const view = runView(run, name);
		const live = liveOf(db, run);
		const maxC: Record<string, number> = {};
		for (const [p, s] of Object.entries(live.summary.probes)) maxC[p] = s.maxC;
		const chart = seriesOf(seriesRunOf(run), series.get(run.id) ?? [], THUMB_FACTOR);
		const probes: Record<string, (number | null)[]> = {};
		for (const [p, s] of Object.entries(chart.probes)) probes[p] = s.meanC;
		return {
			run: view,
			verdict: view.status === 'running' ? null : view.status,
			maxC,
			readingCount: live.state.readingCount,
			coveredS: live.summary.coveredS,
			thumb: { minutes: chart.minutes, probes }
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
	const live = liveOf(db, row);
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
		readingCount: live.state.readingCount,
		lastSeq: live.state.lastSeq,
		verdict: row.status === 'running' ? null : row.status,
		summary: live.summary,
		...seriesParts(row, seriesRows(db, [runId]).get(runId) ?? []),
		events
	};
}

/**
 * The chart, and while the run goes on its bucket rows too: a page that resumes a long run seeds
 * its own downsampled chart from them instead of loading every reading.
 */
function seriesParts(
	row: typeof table.soakRuns.$inferSelect,
	rows: SeriesBucketRow[]
): Pick<SoakRunDetail, 'series' | 'seriesRows'> {
	const series = seriesOf(seriesRunOf(row), rows);
	return row.status === 'running' ? { series, seriesRows: rows } : { series };
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

/** The bridge times a run's readings may carry: its start to now, each with a little clock slack. */
export function readingWindow(row: Pick<RunRow, 'startedAt'>, nowMs: number): { fromT: number; toT: number } {
	return { fromT: row.startedAt.getTime() - READING_CLOCK_SLACK_MS, toT: nowMs + READING_CLOCK_SLACK_MS };
}

const iso = (ms: number) => new Date(ms).toISOString();

function checkReading(
	raw: unknown,
	probes: ReadonlySet<string>,
	window: { fromT: number; toT: number }
): { ok: true } | { ok: false; reason: string } {
	if (typeof raw !== 'object' || raw === null || Array.isArray(raw))
		return { ok: false, reason: 'not an object' };
	const r = raw as Record<string, unknown>;
	if (typeof r.probe !== 'string' || !probes.has(r.probe))
		return {
			ok: false,
			reason: `unknown probe ${JSON.stringify(r.probe)} (this run logs ${[...probes].join(', ')})`
		};
	if (typeof r.seq !== 'number' || !Number.isSafeInteger(r.seq) || r.seq < 0)
		return { ok: false, reason: 'seq must be a non-negative integer' };
	if (typeof r.t !== 'number' || !Number.isFinite(r.t))
		return { ok: false, reason: 't must be ms since the epoch' };
	if (r.t < window.fromT || r.t > window.toT)
		return {
			ok: false,
			reason: `t ${r.t} is outside the run's time window (${iso(window.fromT)} to ${iso(window.toT)}: the run's start to now, with ${READING_CLOCK_SLACK_MS / 1000} s of clock slack)`
		};
	if (typeof r.celsius !== 'number' || !Number.isFinite(r.celsius))
		return { ok: false, reason: 'celsius is not a number' };
	if (r.celsius < CELSIUS_MIN || r.celsius > CELSIUS_MAX)
		return { ok: false, reason: `celsius ${r.celsius} out of range (${CELSIUS_MIN} to ${CELSIUS_MAX} °C)` };
	if (r.bootId !== undefined && r.bootId !== null && (typeof r.bootId !== 'string' || r.bootId.length > 64))
		return { ok: false, reason: 'bootId must be a string of at most 64 characters' };
	return { ok: true };
}

/**
 * Store a batch of readings. Valid readings are stored (INSERT OR IGNORE on run + probe + seq,
 * so a repeated upload is harmless) even when others in the batch are rejected; the rejected
 * ones are named in the answer. The new ones are folded into the run's summary and chart in the
 * same transaction. A run that has ended takes no more readings.
 */
export function addReadings(
	db: Db,
	runId: number,
	readings: readonly unknown[],
	batchBootId?: string,
	nowMs = Date.now()
): AddReadingsResult {
	return db.transaction((tx) => {
		const row = getRow(tx, runId);
		if (row.status !== 'running')
			throw new DomainError('conflict', `The run has ended (${row.status}); it takes no more readings`);
		const probes = new Set(row.probes as string[]);
		const window = readingWindow(row, nowMs);
		const rejected: RejectedReading[] = [];
		const valid: (typeof table.soakReadings.$inferInsert)[] = [];
		readings.forEach((raw, index) => {
			const check = checkReading(raw, probes, window);
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
		// RETURNING with DO NOTHING names exactly the rows that were new: only they are folded in.
		const byKey = new Map(valid.map((v) => [`${v.probe}|${v.seq}`, v]));
		const added: SoakReadingIn[] = [];
		for (let i = 0; i < valid.length; i += 1000) {
			const rows = tx
				.insert(table.soakReadings)
				.values(valid.slice(i, i + 1000))
				.onConflictDoNothing()
				.returning({ probe: table.soakReadings.probe, seq: table.soakReadings.seq })
				.all();
			for (const k of rows) {
				const v = byKey.get(`${k.probe}|${k.seq}`) as (typeof valid)[number];
				added.push({ probe: v.probe, seq: v.seq, t: v.t, celsius: v.celsius, bootId: v.bootId ?? null });
			}
		}
		const live = liveOf(tx, row);
		const next = foldReadings(tx, row, limitsOf(row), live, added);
		if (added.length)
			tx.update(table.soakRuns)
				.set({ summary: next.summary, summaryState: next.state })
				.where(eq(table.soakRuns.id, runId))
				.run();
		return {
			stored: added.length,
			duplicates: valid.length - added.length,
			rejected,
			lastSeq: next.state.lastSeq,
			readingCount: next.state.readingCount
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

/** The newest `count` readings of a run, in seq order: what a page resuming a long run holds. */
export function readingsTail(
	db: Db,
	runId: number,
	count: number
): { readings: (SoakReadingIn & { bootId: string | null })[]; lastSeq: number | null; more: boolean } {
	getRow(db, runId);
	const rows = db
		.select(readingColumns)
		.from(table.soakReadings)
		.where(eq(table.soakReadings.runId, runId))
		.orderBy(desc(table.soakReadings.seq), desc(table.soakReadings.probe))
		.limit(count)
		.all()
		.reverse();
	return { readings: rows, lastSeq: rows.length ? rows[rows.length - 1].seq : null, more: false };
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
		const thdn: ThdnSample[] = [];
		// The keys this batch names that are already stored: one pass over the run's events per
		// batch (not one per event), so a day's worth of THD+N samples does not make uploads slow.
		const keys = [...new Set(events.map((e) => e.key).filter((k): k is string => !!k))];
		const seen = new Set<string>();
		for (let i = 0; i < keys.length; i += 500) {
			const rows = tx
				.select({
					kind: table.soakEvents.kind,
					key: sql<string>`json_extract(${table.soakEvents.detail}, '$.key')`
				})
				.from(table.soakEvents)
				.where(
					and(
						eq(table.soakEvents.runId, runId),
						inArray(sql`json_extract(${table.soakEvents.detail}, '$.key')`, keys.slice(i, i + 500))
					)
				)
				.all();
			for (const r of rows) seen.add(`${r.kind}|${r.key}`);
		}
		for (const e of events) {
			if (e.key) {
				if (seen.has(`${e.kind}|${e.key}`)) continue;
				seen.add(`${e.kind}|${e.key}`);
			}
			tx.insert(table.soakEvents)
				.values({
					runId,
					kind: e.kind,
					at: new Date(e.at),
					detail: e.key ? { ...e.detail, key: e.key } : e.detail
				})
				.run();
			if (e.kind === 'thdn')
				thdn.push({ t: e.at, thdnPercent: e.detail.thdnPercent, channel: e.detail.channel });
			stored++;
		}
		if (thdn.length && row.status === 'running') {
			const next = foldThdn(row, limitsOf(row), liveOf(tx, row), thdn);
			tx.update(table.soakRuns)
				.set({ summary: next.summary, summaryState: next.state })
				.where(eq(table.soakRuns.id, runId))
				.run();
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
 * End a run that reached its duration: the verdict comes from the stored summary (passed, or
 * failed on any breach or a record that stops short), never from what a browser claimed.
 */
export function finishRun(
	db: Db,
	runId: number,
	nowMs = Date.now(),
	actorId: string | null = null
): SoakRunDetail {
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
		const summary = closeSummary(liveOf(tx, row).summary, row.durationS, true);
		const ending = endingOf(summary);
		tx.update(table.soakRuns)
			.set({ status: ending.status, endedAt: new Date(nowMs), summary, abortReason: ending.reason })
			.where(eq(table.soakRuns.id, runId))
			.run();
		audit(tx, {
			actorId,
			action: 'soak.ended',
			jobId: row.jobId,
			subject: `soak run #${runId}`,
			detail: { status: ending.status, reason: ending.reason }
		});
	});
	return getRunDetail(db, runId, nowMs);
}

/**
 * End a run early. A limit breach (the page's, or one the stored record shows) ends it as
 * failed with the breach as the reason; only a technician's stop without one is aborted.
 */
export function abortRun(
	db: Db,
	runId: number,
	input: AbortInput,
	nowMs = Date.now(),
	actorId: string | null = null
): SoakRunDetail {
	const data = abortSchema.parse(input);
	db.transaction((tx) => {
		const row = getRow(tx, runId);
		if (row.status !== 'running')
			throw new DomainError('conflict', `The run has already ended (${row.status})`);
		const window = readingWindow(row, nowMs);
		const issues: { path: string; message: string }[] = [];
		if (data.breach && (data.breach.t < window.fromT || data.breach.t > window.toT))
			issues.push({
				path: 'breach.t',
				message: `${data.breach.t} is outside the run (${iso(window.fromT)} to ${iso(window.toT)})`
			});
		if (data.at !== undefined && (data.at < window.fromT || data.at > window.toT))
			issues.push({
				path: 'at',
				message: `${data.at} is outside the run (${iso(window.fromT)} to ${iso(window.toT)})`
			});
		if (issues.length) throw new DomainError('invalid', 'The abort names a moment outside the run', issues);
		// The moment may not precede the start nor lie in the future.
		const endedAtMs = Math.min(nowMs, Math.max(row.startedAt.getTime(), data.at ?? nowMs));
		const summary = closeSummary(liveOf(tx, row).summary, row.durationS, false);
		if (data.breach) {
			tx.insert(table.soakEvents)
				.values({ runId, kind: 'breach', at: new Date(Math.round(data.breach.t)), detail: data.breach })
				.run();
		}
		const breach = data.breach ?? summary.breaches[0];
		const status = breach ? 'failed' : 'aborted';
		const reason = breach ? `Limit breached: ${breach.message}` : data.reason;
		tx.insert(table.soakEvents)
			.values({ runId, kind: 'abort', at: new Date(endedAtMs), detail: { reason, verdict: status } })
			.run();
		tx.update(table.soakRuns)
			.set({ status, endedAt: new Date(endedAtMs), abortReason: reason, summary })
			.where(eq(table.soakRuns.id, runId))
			.run();
		audit(tx, {
			actorId,
			action: 'soak.ended',
			jobId: row.jobId,
			subject: `soak run #${runId}`,
			detail: { status, reason }
		});
	});
	return getRunDetail(db, runId, nowMs);
}
