// Snapshots: a captured WAV goes in, the server re-runs the measurement core on it, evaluates the
// chosen limit profile and stores results, verdict, a compact spectrum and the audio in one
// transaction. What the browser claims about its readings is never stored as a result.
//
// A snapshot is made in steps so the heavy ones run on a worker thread: `prepareSnapshot` (meta,
// profile, open job, storage room: cheap, on the request thread), `analyseSnapshotAudio`
// (snapshot-analysis.ts: in the pool, or inline), judging against the profile (request thread),
// and the write (snapshot-store.ts: in the pool for a database file, else on this thread).
import { createRequire } from 'node:module';
import { resolve } from 'node:path';
import { and, desc, eq, sql } from 'drizzle-orm';
import type { AnalysisConditions, AnalysisResult } from '$lib/dsp/types';
import type { CompactSpectrum } from '$lib/dsp/spectrum';
import {
	evaluateLimits,
	measurementsFromResults,
	verdictOf,
	conditionChecks,
	type Check,
	type LimitProfileView,
	type Verdict,
	type Weighting
} from '$lib/limit-profiles';
import type { SnapshotListItem } from '$lib/snapshots/types';
import {
	snapshotMetaSchema,
	SNAPSHOT_STAGE_NAMES,
	type SnapshotMeta,
	type SnapshotStimulus
} from '$lib/schemas/snapshots';
import type { SnapshotStorageLimits } from '$lib/schemas/settings';
import { DomainError, type Issue } from './errors';
import { formatIssues } from './validate';
import type { Db } from './db/open';
import * as table from './db/schema';
import type { SnapshotStage } from './db/schema';
import { assertJobOpen, JOB_LOCKED_MESSAGE, LOCKED_STATUSES } from './jobs';
import { assertBenchPowerAllowed } from './worksheets';
import { getLimitProfile } from './limit-profiles';
import { getSettings } from './settings';
import type { Reservation } from './analysis-pool';
import {
	AnalysisRefusal,
	analyseSnapshotAudio,
	type SnapshotAnalysisOutput,
	type SnapshotAnalysisRequest,
	type SnapshotSpectrum,
	type SteadinessResult
} from './snapshot-analysis';
import {
	snapshotStorageUse as storageUse,
	storageRefusal,
	StoreRefusal,
	writeSnapshot,
	type StorePlan
} from './snapshot-store';
import { blobStoreFor, storeRootFor } from './storage';

export {
	ANALYSIS_MAX_SECONDS,
	SNAPSHOT_SPECTRUM_POINTS,
	STEADINESS_MAX_SECONDS,
	STEADINESS_MIN_FRAMES,
	type SnapshotSpectrum,
	type SteadinessResult
} from './snapshot-analysis';
export { SNAPSHOT_MIN_SAMPLES, snapshotMetaSchema, type SnapshotMeta } from '$lib/schemas/snapshots';

export const SNAPSHOT_MAX_WAV_BYTES = 32 * 1024 * 1024;

// The browser's stage names and the database's are one list.
const STAGES_MATCH: readonly SnapshotStage[] = SNAPSHOT_STAGE_NAMES;
void STAGES_MATCH;

/** A bad upload, named by where it is wrong (`samples`, `meta`, `meta.profileId` …): answered as a 400. */
function invalid(path: string, message: string, issues?: Issue[]): DomainError {
	return new DomainError('invalid', message, issues ?? [{ path, message }]);
}

/** Where a measuring condition came from: the chosen profile, the bench's meta, or neither. */
export type ConditionSource = 'profile' | 'bench' | 'default' | 'none';

export interface ConditionSources {
	bandHz: ConditionSource;
	weighting: ConditionSource;
	loadOhms: ConditionSource;
	referenceVrms: ConditionSource;
}

/** What is stored in `snapshots.results`: the analysis (CLI JSON shape) plus steadiness. */
export interface SnapshotResults extends AnalysisResult {
	/**
	 * The analysis conditions, where each profile-governed one came from, and the test signal
	 * (absent in snapshots stored before it was recorded: those were tones).
	 */
	conditions: AnalysisConditions & {
		sources: ConditionSources;
		stimulus?: SnapshotStimulus;
		/** DC offset is a reading only from a DC-coupled input; older snapshots lack the field. */
		dcCoupled?: boolean;
	};
	steadiness: SteadinessResult[];
	/** Samples per channel in the uploaded WAV, and how many of the newest were analysed. */
	capturedSamples: number;
	analysedSamples: number;
}

export interface CreatedSnapshot {
	id: number;
	results: SnapshotResults;
	verdict: Verdict;
	checks: Check[];
}

/** Parse the `meta` part: JSON text → validated meta, or a 400 naming the problem. */
export function parseSnapshotMeta(raw: unknown): SnapshotMeta {
	let value = raw;
	if (typeof raw === 'string') {
		try {
			value = JSON.parse(raw);
		} catch {
			throw invalid('meta', 'meta is not valid JSON');
		}
	}
	const parsed = snapshotMetaSchema.safeParse(value);
	if (!parsed.success)
		throw invalid(
			'meta',
			'meta is invalid',
			formatIssues(parsed.error).map((i) => ({ ...i, path: i.path ? `meta.${i.path}` : 'meta' }))
		);
	return parsed.data;
}

// ── storage quota ───────────────────────────────────────────────────────────

/** Bytes of snapshot audio stored for one job and for the whole shop. */
export function snapshotStorageUse(db: Db, jobId: number): { jobBytes: number; shopBytes: number } {
	return storageUse(db.$client, jobId);
}

/** A refused write as the answer it gets (404 / 409 / 413); anything else passes through. */
function fromStoreRefusal(e: unknown): unknown {
	return e instanceof StoreRefusal ? new DomainError(e.code, e.message, e.issues) : e;
}

/** 413 when `bytes` more audio would pass the job's or the shop's cap, naming the cap and the use. */
export function assertSnapshotStorageRoom(
	db: Db,
	jobId: number,
	bytes: number,
	limits: SnapshotStorageLimits
): void {
	const refusal = storageRefusal(storageUse(db.$client, jobId), bytes, limits);
	if (refusal) throw fromStoreRefusal(refusal);
}

// ── creating ────────────────────────────────────────────────────────────────

export interface CreateSnapshotInput {
	jobId: number;
	userId: string;
	wav: Uint8Array;
	/** The `meta` part as received (JSON text or an object). */
	meta: unknown;
}

/** Everything settled before the audio is analysed. */
export interface PreparedSnapshot {
	jobId: number;
	userId: string;
	meta: SnapshotMeta;
	profile: LimitProfileView | null;
	sources: ConditionSources;
	weighting: Weighting;
	loadOhms: number | undefined;
	referenceVrms: number | undefined;
	storage: SnapshotStorageLimits;
	/** What goes to the analysis (the WAV included). */
	request: SnapshotAnalysisRequest;
}

/**
 * The cheap checks and choices before analysis: meta (400), open job (404/409), profile (400) and
 * storage room (413). Nothing is stored.
 */
export function prepareSnapshot(db: Db, input: CreateSnapshotInput): PreparedSnapshot {
	const meta = parseSnapshotMeta(input.meta);
	assertJobOpen(db, input.jobId);
	assertBenchPowerAllowed(db, input.jobId, 'capture');
	if (input.wav.byteLength > SNAPSHOT_MAX_WAV_BYTES)
		throw new DomainError(
			'too-large',
			`samples: the WAV file is larger than ${SNAPSHOT_MAX_WAV_BYTES} bytes`
		);
	const settings = getSettings(db);
	assertSnapshotStorageRoom(db, input.jobId, input.wav.byteLength, settings.snapshotStorage);

	let profile: LimitProfileView | null = null;
	if (meta.profileId != null) {
		profile = getLimitProfile(db, meta.profileId);
		if (!profile)
			throw invalid('meta.profileId', `meta.profileId: no limit profile with id ${meta.profileId}`);
		if (profile.archived)
			throw invalid('meta.profileId', `meta.profileId: the limit profile “${profile.name}” is archived`);
	}

	// Band and weighting are analysis choices: the profile's win, so its limits are judged the way
	// they were written. Load and generator level are facts of the bench (the resistor on the
	// terminals, the level the generator put out): they are measured as the bench states them, and
	// where they differ from what the profile assumes, the limits that depend on them fail
	// (`conditionChecks`) instead of being computed under a condition that did not hold.
	const a = meta.analysis ?? {};
	const pc = profile?.conditions;
	type Picked<T> = { value: T | undefined; source: ConditionSource };
	const pick = <T>(
		first: [T | null | undefined, ConditionSource],
		second: [T | null | undefined, ConditionSource],
		fallback?: T
	): Picked<T> =>
		first[0] != null
			? { value: first[0], source: first[1] }
			: second[0] != null
				? { value: second[0], source: second[1] }
				: { value: fallback, source: fallback === undefined ? 'none' : 'default' };
	const band = pick<[number, number]>(
		[pc && [pc.bandLowHz, pc.bandHighHz], 'profile'],
		[a.bandHz, 'bench'],
		[20, 20_000]
	);
	const weight = pick<Weighting>([pc?.weighting, 'profile'], [a.weighting, 'bench'], 'none');
	const load = pick([meta.loadOhms, 'bench'], [pc?.loadOhms, 'profile']);
	const reference = pick([meta.referenceVrms, 'bench'], [pc?.generatorLevelVrms, 'profile']);
	const weighting = weight.value as Weighting;
	return {
		jobId: input.jobId,
		userId: input.userId,
		meta,
		profile,
		sources: {
			bandHz: band.source,
			weighting: weight.source,
			loadOhms: load.source,
			referenceVrms: reference.source
		},
		weighting,
		loadOhms: load.value,
		referenceVrms: reference.value,
		storage: settings.snapshotStorage,
		request: {
			wav: input.wav,
			fullScaleVolts: meta.fullScaleVolts,
			fftSize: a.fftSize,
			averages: a.averages,
			window: a.window,
			bandHz: band.value as [number, number],
			weighting,
			loadOhms: load.value,
			referenceVrms: reference.value,
			stimulus: pc?.stimulus ?? meta.stimulus,
			mainsHz: settings.mainsHz
		}
	};
}

/** A worker's refusal as the 400 the API answers; anything else passes through. */
export function asDomainError(e: unknown): unknown {
	return e instanceof AnalysisRefusal ? invalid(e.path, e.message) : e;
}

interface JudgedSnapshot {
	results: SnapshotResults;
	verdict: Verdict;
	checks: Check[];
	/** The write: re-checks and the row's INSERT, for whichever connection performs it. */
	plan: StorePlan;
}

/** Judge the analysed snapshot against its profile and build the write. */
function judgeSnapshot(db: Db, p: PreparedSnapshot, out: SnapshotAnalysisOutput): JudgedSnapshot {
	const { analysis, steadiness: steadinessResults, spectrum, fullScaleVolts: fsv } = out;
	const results: SnapshotResults = {
		...analysis,
		conditions: {
			...analysis.conditions,
			sources: p.sources,
			stimulus: p.request.stimulus,
			dcCoupled: p.meta.dcCoupled
		},
		steadiness: steadinessResults,
		capturedSamples: out.capturedSamples,
		analysedSamples: out.analysedSamples
	};
	const profile = p.profile;
	const checks = profile
		? conditionChecks(
				evaluateLimits(
					profile.limits,
					measurementsFromResults(
						analysis.channels,
						{ balanceDb: analysis.balanceDb, crosstalkDb: analysis.crosstalkDb },
						steadinessResults,
						p.weighting,
						{ dcCoupled: p.meta.dcCoupled }
					)
				),
				profile.conditions,
				{ loadOhms: p.loadOhms ?? null, referenceVrms: p.referenceVrms ?? null }
			)
		: [];
	const verdict: Verdict = profile ? verdictOf(checks) : 'none';
	const insert = db
		.insert(table.snapshots)
		.values({
			jobId: p.jobId,
			createdBy: p.userId,
			label: p.meta.label,
			stage: p.meta.stage,
			profileId: profile?.id ?? null,
			profile: profile
				? { id: profile.id, name: profile.name, conditions: profile.conditions, limits: profile.limits }
				: null,
			sampleRateHz: out.sampleRateHz,
			channelCount: out.channelCount,
			sampleCount: out.capturedSamples,
			fullScaleVolts: fsv[0],
			loadOhms: p.loadOhms ?? null,
			results,
			verdict,
			checks,
			spectrum,
			settings: {
				...(p.meta.settings ?? {}),
				analysis: p.meta.analysis ?? null,
				fullScaleVolts: fsv,
				stimulus: p.request.stimulus
			}
		})
		.returning({ id: table.snapshots.id })
		.toSQL();
	return {
		results,
		verdict,
		checks,
		plan: {
			jobId: p.jobId,
			lockedStatuses: LOCKED_STATUSES,
			lockedMessage: JOB_LOCKED_MESSAGE,
			storage: p.storage,
			insert: { sql: insert.sql, params: insert.params },
			sha256: out.sha256,
			storeRoot: storeRootFor(db.$client.name),
			audit: {
				actorId: p.userId,
				label: p.meta.label,
				detail: { stage: p.meta.stage, verdict, profile: profile?.name ?? null, sha256: out.sha256 }
			}
		}
	};
}

/** Judge the analysed snapshot and store it with its audio (one transaction, on this thread). */
export function storeSnapshot(db: Db, p: PreparedSnapshot, out: SnapshotAnalysisOutput): CreatedSnapshot {
	const { results, verdict, checks, plan } = judgeSnapshot(db, p, out);
	let id: number;
	try {
		id = writeSnapshot(db.$client, plan, out.wav);
	} catch (e) {
		throw fromStoreRefusal(e);
	}
	return { id, results, verdict, checks };
}

let sqliteModule: string | undefined;

/**
 * Analyse (on this thread), judge and store a snapshot: for tests, fixtures and scripts. The server
 * uses `createSnapshotInPool`. Throws DomainError for bad input (nothing stored).
 */
export function createSnapshot(db: Db, input: CreateSnapshotInput): CreatedSnapshot {
	const prepared = prepareSnapshot(db, input);
	let out: SnapshotAnalysisOutput;
	try {
		out = analyseSnapshotAudio(prepared.request);
	} catch (e) {
		throw asDomainError(e);
	}
	return storeSnapshot(db, prepared, out);
}

/**
 * `createSnapshot` with the heavy parts on the pool's threads through `reservation`: the analysis,
 * and for a database file also the write (a worker's own connection; an in-memory database can
 * only be written here). Releases the reservation when done.
 */
export async function createSnapshotInPool(
	db: Db,
	input: CreateSnapshotInput,
	reservation: Reservation
): Promise<CreatedSnapshot> {
	try {
		const prepared = prepareSnapshot(db, input);
		let out: SnapshotAnalysisOutput;
		try {
			out = await reservation.run(prepared.request);
		} catch (e) {
			throw asDomainError(e);
		}
		if (db.$client.memory) return storeSnapshot(db, prepared, out);
		const { results, verdict, checks, plan } = judgeSnapshot(db, prepared, out);
		sqliteModule ??= createRequire(import.meta.url).resolve('better-sqlite3');
		let id: number;
		try {
			id = await reservation.store({ dbFile: resolve(db.$client.name), sqliteModule, plan, wav: out.wav });
		} catch (e) {
			throw fromStoreRefusal(e);
		}
		return { id, results, verdict, checks };
	} finally {
		reservation.release();
	}
}

// ── reading ─────────────────────────────────────────────────────────────────

export type { SnapshotListItem };

export interface SnapshotDetail extends Omit<SnapshotListItem, 'thumbnail'> {
	createdBy: string;
	profileId: number | null;
	profile: unknown;
	fullScaleVolts: number;
	loadOhms: number | null;
	sampleCount: number;
	results: SnapshotResults;
	checks: Check[];
	spectrum: SnapshotSpectrum;
	settings: unknown;
	audioSha256: string | null;
}

/** At most `points` points of a compact spectrum, keeping each stretch's highest level (peaks survive). */
export function thumbnailOf(s: CompactSpectrum, points = 240): CompactSpectrum {
	const n = s.frequencyHz.length;
	if (n <= points) return s;
	const frequencyHz: number[] = [];
	const levelDbv: number[] = [];
	for (let p = 0; p < points; p++) {
		const a = Math.floor((p * n) / points);
		const b = Math.floor(((p + 1) * n) / points);
		let best = a;
		for (let i = a + 1; i < b; i++) if (s.levelDbv[i] > s.levelDbv[best]) best = i;
		frequencyHz.push(s.frequencyHz[best]);
		levelDbv.push(s.levelDbv[best]);
	}
	return { frequencyHz, levelDbv };
}

type SnapshotRow = typeof table.snapshots.$inferSelect;

/** The fields a list item and the detail share, from one row and its author's name. */
function itemOf(s: SnapshotRow, createdByName: string): Omit<SnapshotListItem, 'thumbnail'> {
	const r = s.results as SnapshotResults;
	const checks = (s.checks as Check[]) ?? [];
	const p = s.profile as { name?: unknown } | null;
	return {
		id: s.id,
		jobId: s.jobId,
		label: s.label,
		stage: s.stage,
		verdict: s.verdict,
		profileName: p && typeof p.name === 'string' ? p.name : null,
		createdAt: s.createdAt.toISOString(),
		createdByName,
		sampleRateHz: s.sampleRateHz,
		channelCount: s.channelCount,
		summary: (r.channels ?? []).map((c) => ({
			channel: c.channel,
			frequencyHz: c.frequencyHz,
			levelVrms: c.levelVrms,
			thdnPercent: c.thdnPercent,
			weighting: r.conditions?.weighting ?? 'none'
		})),
		checksPassed: checks.filter((c) => c.pass).length,
		checksTotal: checks.length
	};
}

export function listSnapshots(db: Db, jobId: number): SnapshotListItem[] {
	const rows = db
		.select({ s: table.snapshots, name: table.users.name })
		.from(table.snapshots)
		.innerJoin(table.users, eq(table.users.id, table.snapshots.createdBy))
		.where(eq(table.snapshots.jobId, jobId))
		.orderBy(desc(table.snapshots.createdAt), desc(table.snapshots.id))
		.all();
	return rows.map(({ s, name }) => ({
		...itemOf(s, name),
		thumbnail: ((s.spectrum as SnapshotSpectrum).channels ?? []).map((c) => thumbnailOf(c))
	}));
}

export function getSnapshot(db: Db, id: number, jobId?: number): SnapshotDetail | null {
	const where =
		jobId === undefined
			? eq(table.snapshots.id, id)
			: and(eq(table.snapshots.id, id), eq(table.snapshots.jobId, jobId));
	const found = db
		.select({ s: table.snapshots, name: table.users.name, sha: audioSha256 })
		.from(table.snapshots)
		.innerJoin(table.users, eq(table.users.id, table.snapshots.createdBy))
		.where(where)
		.get();
	if (!found) return null;
	const { s, name, sha } = found;
	return {
		...itemOf(s, name),
		createdBy: s.createdBy,
		profileId: s.profileId,
		profile: s.profile,
		fullScaleVolts: s.fullScaleVolts,
		loadOhms: s.loadOhms,
		sampleCount: s.sampleCount,
		results: s.results as SnapshotResults,
		checks: s.checks as Check[],
		spectrum: s.spectrum as SnapshotSpectrum,
		settings: s.settings,
		audioSha256: sha ?? null
	};
}

/** A snapshot's audio hash: in the blob store, or (not yet moved) in the database. */
export const audioSha256 = sql<string | null>`coalesce(
	(select b.sha256 from snapshot_audio_blobs b where b.snapshot_id = ${table.snapshots.id}),
	(select a.sha256 from snapshot_audio a where a.snapshot_id = ${table.snapshots.id}))`;

/**
 * The stored WAV bytes of a snapshot, checked against their recorded SHA-256 (a damaged store
 * throws BlobCorruptError rather than hand out other bytes), or null for no such snapshot.
 */
export async function getSnapshotAudio(
	db: Db,
	id: number
): Promise<{ wav: Buffer; sha256: string; label: string; jobId: number } | null> {
	const snap = db
		.select({ label: table.snapshots.label, jobId: table.snapshots.jobId })
		.from(table.snapshots)
		.where(eq(table.snapshots.id, id))
		.get();
	if (!snap) return null;
	const ref = db
		.select({ sha256: table.snapshotAudioBlobs.sha256 })
		.from(table.snapshotAudioBlobs)
		.where(eq(table.snapshotAudioBlobs.snapshotId, id))
		.get();
	if (ref) {
		const wav = await blobStoreFor(db.$client.name).get(ref.sha256);
		return { wav, sha256: ref.sha256, ...snap };
	}
	const legacy = db
		.select({ wav: table.snapshotAudio.wav, sha256: table.snapshotAudio.sha256 })
		.from(table.snapshotAudio)
		.where(eq(table.snapshotAudio.snapshotId, id))
		.get();
	return legacy ? { ...legacy, ...snap } : null;
}
