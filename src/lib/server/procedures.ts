// Bench procedure results: validated, recomputed from their raw per-step readings with the shared
// procedures library (the bench's own figures are never trusted), judged, stored immutably and
// audited. The job page, compare and the customer report read them through procedureSummary.
import { and, desc, eq } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import { DomainError } from './errors';
import { validate } from './validate';
import { audit } from './audit';
import { assertJobOpen } from './jobs';
import { procedureRunSchema, type ProcedureKind, type ProcedureRunData } from '../schemas/procedures';
import { flatness, relativeLevelsDb, type Flatness } from '../procedures/sweep';
import { phonoDeviation, type PhonoResult } from '../procedures/phono';
import { replayRamp, type ChannelCrossing, type StopReason } from '../procedures/max-power';
import { evaluateCrosstalk, type CrosstalkResult } from '../procedures/crosstalk';
import { evaluateImd, type ImdChannelFigures, type ImdMethod } from '../procedures/imd';
import { evaluateMeter, type MeterResult } from '../procedures/meter';
import { stabilityVerdict, type StabilityObservation } from '../procedures/stability';
import { getJobFile, readJobFile } from './job-files';
import { asDomainError } from './snapshots';
import type { BlobStore } from './storage';
import type { SweepTask } from './sweep-analysis';
import type { SweepFileResult } from '../procedures/sweep-file';
import type { FileResponseInput } from '../schemas/procedures';
import { PHOTO_TYPES } from '../schemas/job-files';
import { getLimitProfile } from './limit-profiles';
import { profileLimitFor, type AppliedLimit } from '../procedures/limits';

export type ProcedureVerdict = 'pass' | 'fail' | 'none';

export type ProcedureResult = ProcedureFigures & {
	/** The limit the verdict was judged against (absent on runs saved before limits were recorded). */
	appliedLimit?: AppliedLimit | null;
};

type ProcedureFigures =
	| {
			kind: 'response';
			frequenciesHz: number[];
			relativeDb: (number | null)[][];
			flatness: (Flatness | null)[];
	  }
	| ({ kind: 'phono'; frequenciesHz: number[] } & PhonoResult)
	| ({ kind: 'crosstalk'; steps: { frequencyHz: number; direction: string }[] } & CrosstalkResult)
	| {
			kind: 'imd';
			measurements: { method: ImdMethod; channels: (ImdChannelFigures | null)[] }[];
			/** Highest IMD over every method and channel, %. */
			worstPercent: number | null;
	  }
	| ({ kind: 'meter'; loadOhms: number; channel: 'left' | 'right' } & MeterResult)
	| {
			kind: 'stability';
			observed: StabilityObservation;
			squareWaveHz: number;
			loadOhms: number;
			capacitanceMicrofarads: number;
			photoFileId: number | null;
	  }
	| {
			kind: 'max-power';
			reason: StopReason;
			crossings: (ChannelCrossing | null)[];
			steps: number;
			mainsVoltsRms: number;
	  };

export interface ProcedureRunView {
	id: number;
	jobId: number;
	kind: ProcedureKind;
	label: string;
	input: ProcedureRunData;
	result: ProcedureResult;
	verdict: ProcedureVerdict;
	createdBy: { id: string; name: string };
	createdAt: string;
}

/** The limit typed for the run itself, when no profile limit judges it. */
function runLimit(data: ProcedureRunData): AppliedLimit | null {
	const le = (value: number | null | undefined, text: string): AppliedLimit | null =>
		value == null ? null : { value, op: 'le', text, source: 'run' };
	switch (data.kind) {
		case 'response':
			return le(data.limitPlusMinusDb, `flat within ±${data.limitPlusMinusDb} dB`);
		case 'phono':
			return le(data.limitDb, `within ±${data.limitDb} dB of the RIAA curve`);
		case 'crosstalk':
			return le(data.limitDb, `crosstalk ≤ ${data.limitDb} dB`);
		case 'imd':
			return le(data.limitPercent, `IMD ≤ ${data.limitPercent} %`);
		case 'meter':
			return le(data.limitDb, `meter within ±${data.limitDb} dB`);
		case 'max-power':
			return data.minPowerW == null
				? null
				: { value: data.minPowerW, op: 'ge', text: `power ≥ ${data.minPowerW} W`, source: 'run' };
		default:
			return null;
	}
}

const judge = (ok: boolean): ProcedureVerdict => (ok ? 'pass' : 'fail');

/**
 * The figures and verdict the server stands behind, from the raw readings alone, judged against
 * `limit` (a limit profile's) or else the limit typed for the run.
 */
export function computeProcedure(
	data: ProcedureRunData,
	ratedPowerW: number | null,
	limit: AppliedLimit | null = null
): { result: ProcedureResult; verdict: ProcedureVerdict; appliedLimit: AppliedLimit | null } {
	const appliedLimit = limit ?? runLimit(data);
	return { ...computeFigures(data, ratedPowerW, appliedLimit?.value ?? null), appliedLimit };
}

function computeFigures(
	data: ProcedureRunData,
	ratedPowerW: number | null,
	lim: number | null
): { result: ProcedureFigures; verdict: ProcedureVerdict } {
	if (data.kind === 'response') {
		const frequenciesHz = data.steps.map((s) => s.frequencyHz);
		const relativeDb = relativeLevelsDb(data.steps);
		const channels = Math.max(...data.steps.map((s) => s.levelVrms.length));
		const fl = Array.from({ length: channels }, (_, ch) =>
			flatness(
				frequenciesHz,
				relativeDb.map((r) => r[ch] ?? null),
				data.bandHz[0],
				data.bandHz[1]
			)
		);
		const verdict: ProcedureVerdict =
			lim === null ? 'none' : judge(fl.every((f) => f !== null && f.maxDb <= lim && f.minDb >= -lim));
		return { result: { kind: 'response', frequenciesHz, relativeDb, flatness: fl }, verdict };
	}
	if (data.kind === 'phono') {
		const r = phonoDeviation(data.steps, data);
		const verdict: ProcedureVerdict =
			lim === null ? 'none' : judge(r.maxDeviationDb.every((d) => d !== null && d <= lim));
		return { result: { kind: 'phono', frequenciesHz: data.steps.map((s) => s.frequencyHz), ...r }, verdict };
	}
	if (data.kind === 'crosstalk') {
		const r = evaluateCrosstalk(data.steps);
		const verdict: ProcedureVerdict = lim === null ? 'none' : judge(r.stepsDb.every((d) => d <= lim));
		return {
			result: {
				kind: 'crosstalk',
				steps: data.steps.map((s) => ({ frequencyHz: s.frequencyHz, direction: s.direction })),
				...r
			},
			verdict
		};
	}
	if (data.kind === 'imd') {
		const measurements = data.measurements.map((m) => ({
			method: m.method,
			channels: m.channels.map((c) => (c ? evaluateImd(m.method, c) : null))
		}));
		const all = measurements.flatMap((m) => m.channels.map((c) => c?.imdPercent ?? null));
		const read = all.filter((v): v is number => v !== null);
		const worstPercent = read.length ? Math.max(...read) : null;
		// A channel that could not be read cannot pass.
		const verdict: ProcedureVerdict = lim === null ? 'none' : judge(all.every((v) => v !== null && v <= lim));
		return { result: { kind: 'imd', measurements, worstPercent }, verdict };
	}
	if (data.kind === 'meter') {
		const r = evaluateMeter(data.steps, data.loadOhms);
		const read = r.points.filter((p) => p.errorDb !== null);
		const verdict: ProcedureVerdict =
			lim === null
				? 'none'
				: judge(read.length === r.points.length && read.every((p) => Math.abs(p.errorDb!) <= lim));
		return {
			result: { kind: 'meter', loadOhms: data.loadOhms, channel: data.channel, ...r },
			verdict
		};
	}
	if (data.kind === 'stability')
		return {
			result: {
				kind: 'stability',
				observed: data.observed,
				squareWaveHz: data.squareWaveHz,
				loadOhms: data.loadOhms,
				capacitanceMicrofarads: data.capacitanceMicrofarads,
				photoFileId: data.photoFileId
			},
			verdict: stabilityVerdict(data.observed)
		};
	if (data.throughLamp)
		throw new DomainError(
			'invalid',
			'A maximum-power figure taken through a current-limiting lamp is not the unit’s power: run it on full mains and record the mains voltage.',
			[{ path: 'throughLamp', message: 'must be false: full mains, no series lamp' }]
		);
	const state = replayRamp(
		{
			frequencyHz: data.frequencyHz,
			loadOhms: data.loadOhms,
			thresholdPercent: data.thresholdPercent,
			startLevelVrms: data.startLevelVrms,
			stepDb: data.stepDb,
			maxLevelVrms: data.maxLevelVrms,
			maxSteps: data.maxSteps,
			ratedPowerW,
			channels: data.channels
		},
		data.readings,
		data.cancelled
	);
	const reason = state.reason ?? 'cancelled';
	// A ramp that reached the threshold on every channel is a measurement; anything else is a record.
	// With a minimum power, each channel's power at the threshold must reach it.
	const reached = state.crossings.every((c) => c !== null);
	const verdict: ProcedureVerdict =
		reason === 'over-rated'
			? 'fail'
			: lim !== null && state.crossings.some((c) => c !== null && c.powerW < lim)
				? 'fail'
				: reason === 'threshold' && reached
					? 'pass'
					: 'none';
	return {
		result: {
			kind: 'max-power',
			reason,
			crossings: state.crossings,
			steps: state.steps.length,
			mainsVoltsRms: data.mainsVoltsRms
		},
		verdict
	};
}

export function recordProcedureRun(db: Db, jobId: number, userId: string, input: unknown): ProcedureRunView {
	const data = validate(procedureRunSchema, input, 'Invalid procedure result');
	if (data.kind === 'stability' && data.photoFileId !== null) {
		// Files are never deleted (removal is a mark), so this check outside the write cannot go stale.
		const f = getJobFile(db, data.photoFileId);
		if (!f || f.jobId !== jobId || f.removedAt !== null || !PHOTO_TYPES.includes(f.type))
			throw new DomainError('invalid', 'The stability photo must be a photo among this job’s files.', [
				{ path: 'photoFileId', message: 'must name a photo uploaded to this job (not removed)' }
			]);
	}
	let profileLimit: AppliedLimit | null = null;
	if (data.kind !== 'stability' && data.profileId != null) {
		const profile = getLimitProfile(db, data.profileId);
		if (!profile || profile.archived)
			throw new DomainError(
				'invalid',
				'The limit profile to judge this run by does not exist or is archived.',
				[{ path: 'profileId', message: 'must name a current limit profile, or be left out' }]
			);
		profileLimit = profileLimitFor(data.kind, profile);
	}
	const id = db.transaction((tx) => {
		const job = assertJobOpen(tx, jobId);
		const computed = computeProcedure(data, job.ratedPowerW, profileLimit);
		const { verdict, appliedLimit } = computed;
		const result: ProcedureResult = { ...computed.result, appliedLimit };
		const now = new Date();
		const row = tx
			.insert(table.procedureRuns)
			.values({
				jobId,
				kind: data.kind,
				label: data.label,
				input: data,
				result,
				verdict,
				createdBy: userId,
				createdAt: now
			})
			.returning({ id: table.procedureRuns.id })
			.get();
		audit(tx, {
			actorId: userId,
			action: 'procedure.recorded',
			jobId,
			subject: `procedure #${row.id}`,
			detail: { kind: data.kind, label: data.label, verdict, limit: appliedLimit?.text ?? null },
			at: now
		});
		return row.id;
	});
	return getProcedureRun(db, id)!;
}

const columns = {
	id: table.procedureRuns.id,
	jobId: table.procedureRuns.jobId,
	kind: table.procedureRuns.kind,
	label: table.procedureRuns.label,
	input: table.procedureRuns.input,
	result: table.procedureRuns.result,
	verdict: table.procedureRuns.verdict,
	createdAt: table.procedureRuns.createdAt,
	userId: table.users.id,
	userName: table.users.name
};

type Row = {
	id: number;
	jobId: number;
	kind: ProcedureKind;
	label: string;
	input: unknown;
	result: unknown;
	verdict: ProcedureVerdict;
	createdAt: Date;
	userId: string;
	userName: string;
};

function view(r: Row): ProcedureRunView {
	return {
		id: r.id,
		jobId: r.jobId,
		kind: r.kind,
		label: r.label,
		input: r.input as ProcedureRunData,
		result: r.result as ProcedureResult,
		verdict: r.verdict,
		createdBy: { id: r.userId, name: r.userName },
		createdAt: r.createdAt.toISOString()
	};
}

export function getProcedureRun(db: Db, id: number): ProcedureRunView | null {
	const r = db
		.select(columns)
		.from(table.procedureRuns)
		.innerJoin(table.users, eq(table.users.id, table.procedureRuns.createdBy))
		.where(eq(table.procedureRuns.id, id))
		.get();
	return r ? view(r as Row) : null;
}

/** A job's procedure runs, newest first (at most `limit`). */
export function listProcedureRuns(
	db: Db,
	jobId: number,
	opts: { kind?: ProcedureKind; limit?: number } = {}
): ProcedureRunView[] {
	const where = opts.kind
		? and(eq(table.procedureRuns.jobId, jobId), eq(table.procedureRuns.kind, opts.kind))
		: eq(table.procedureRuns.jobId, jobId);
	return db
		.select(columns)
		.from(table.procedureRuns)
		.innerJoin(table.users, eq(table.users.id, table.procedureRuns.createdBy))
		.where(where)
		.orderBy(desc(table.procedureRuns.createdAt), desc(table.procedureRuns.id))
		.limit(Math.min(200, opts.limit ?? 100))
		.all()
		.map((r) => view(r as Row));
}

/** What compare and the customer report show: the newest run of each kind with its verdict. */
export function procedureSummary(db: Db, jobId: number): ProcedureRunView[] {
	const latest = new Map<ProcedureKind, ProcedureRunView>();
	for (const r of listProcedureRuns(db, jobId, { limit: 200 }))
		if (!latest.has(r.kind)) latest.set(r.kind, r);
	return [...latest.values()];
}

/**
 * A WAV among a job's files read as a recorded stepped sweep: the response per step and channel,
 * as `npm run analyze -- FILE.wav --response` prints it. `run` does the analysis off the request
 * thread (the analysis pool's sweep task).
 */
export async function responseFromFile(
	db: Db,
	store: BlobStore,
	fileId: number,
	input: FileResponseInput,
	run: (task: SweepTask) => Promise<SweepFileResult>
): Promise<{ fileId: number; name: string } & SweepFileResult> {
	const { file, bytes } = await readJobFile(db, store, fileId);
	if (file.type !== 'wav')
		throw new DomainError('invalid', 'Only a WAV file can be read as a recorded sweep.', [
			{ path: 'id', message: `file #${fileId} is a ${file.type}; choose a WAV` }
		]);
	try {
		const result = await run({
			wav: new Uint8Array(bytes.buffer, bytes.byteOffset, bytes.byteLength),
			riaa: input.riaa,
			iecRolloff: input.iecRolloff
		});
		return { fileId, name: file.name, ...result };
	} catch (e) {
		throw asDomainError(e);
	}
}
