// Sign-off: the evidence a supervisor reviews (latest before/after snapshots, soak runs, parts),
// the shop's requirements judged on it, the electronic signature itself (password re-entered,
// printed name, date and time, meaning, comment, SHA-256 over the canonical JSON of what it
// covers), and the check that recomputes that hash when a signed job is opened.
// Sign-offs are immutable (triggers); a reopening supersedes one in its own table (jobs.ts).
// Relative imports only: the seed runs this under tsx without `$lib`.
import { and, asc, count, desc, eq, isNull } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import type { Role } from './db/schema';
import { DomainError } from './errors';
import { validate } from './validate';
import { audit, type AuditConn } from './audit';
import { confirmPassword, waitText } from './auth';
import { getSetting } from './settings';
import { recordStatusChange } from './jobs';
import { readSheets, safetyEvidence } from './worksheets';
import { audioSha256 } from './snapshots';
import { describeDifferences, fingerprint, type CoveredRecord } from './sign-off-hash';
import {
	FOUR_EYES_MESSAGE,
	SIGN_OFF_MEANINGS,
	evaluateSignOff,
	signOffInputSchema,
	type EvidenceSafetyCheck,
	type EvidenceSnapshot,
	type EvidenceSoakRun,
	type RequirementResult,
	type SignOffCheck,
	type SignOffEvaluation,
	type SignOffInput,
	type SignOffView
} from '../schemas/sign-off';

type Conn = AuditConn;

export interface Signer {
	id: string;
	role: Role;
}

/** Where a sent-back job goes: back to the bench for more work. */
export const SEND_BACK_TO = 'repairing' as const;

// ── evidence ────────────────────────────────────────────────────────────────

/** The record a signature covers, read fresh from the tables (snapshots, audio hashes, soak runs, parts). */
export function coveredRecord(db: Conn, jobId: number): CoveredRecord {
	const snapshots = db
		.select({ s: table.snapshots, audioSha256 })
		.from(table.snapshots)
		.where(eq(table.snapshots.jobId, jobId))
		.orderBy(asc(table.snapshots.id))
		.all()
		.map(({ s, audioSha256 }) => ({
			id: s.id,
			stage: s.stage,
			label: s.label,
			verdict: s.verdict,
			results: s.results,
			checks: s.checks,
			audioSha256: audioSha256 ?? null,
			createdBy: s.createdBy,
			createdAt: s.createdAt.toISOString()
		}));
	const readingCounts = new Map(
		db
			.select({ runId: table.soakReadings.runId, n: count() })
			.from(table.soakReadings)
			.innerJoin(table.soakRuns, eq(table.soakRuns.id, table.soakReadings.runId))
			.where(eq(table.soakRuns.jobId, jobId))
			.groupBy(table.soakReadings.runId)
			.all()
			.map((r) => [r.runId, r.n] as const)
	);
	const soakRuns = db
		.select()
		.from(table.soakRuns)
		.where(eq(table.soakRuns.jobId, jobId))
		.orderBy(asc(table.soakRuns.id))
		.all()
		.map((r) => ({
			id: r.id,
			status: r.status,
			preset: r.preset,
			timeScale: r.timeScale,
			frequencyHz: r.frequencyHz,
			loadOhms: r.loadOhms,
			drivePowerW: r.drivePowerW,
			durationS: r.durationS,
			startedAt: r.startedAt.toISOString(),
			endedAt: r.endedAt ? r.endedAt.toISOString() : null,
			abortReason: r.abortReason,
			summary: r.summary ?? null,
			readingCount: readingCounts.get(r.id) ?? 0
		}));
	const parts = db
		.select()
		.from(table.parts)
		.where(eq(table.parts.jobId, jobId))
		.orderBy(asc(table.parts.id))
		.all()
		.map((p) => ({
			id: p.id,
			refDes: p.refDes,
			description: p.description,
			value: p.value,
			quantity: p.quantity,
			unitCostCents: p.unitCostCents,
			supplier: p.supplier,
			state: p.state,
			verificationNote: p.verificationNote
		}));
	// The worksheets as stored (validated on read: the signature covers what the pages show).
	const worksheets = readSheets(db, jobId)
		.views.filter((v) => v.data !== null)
		.map((v) => ({ kind: v.kind, version: v.version, data: v.data }));
	return { version: 1, jobId, snapshots, soakRuns, parts, ...(worksheets.length ? { worksheets } : {}) };
}

function evidenceOf(
	db: Conn,
	jobId: number
): { snapshots: EvidenceSnapshot[]; soakRuns: EvidenceSoakRun[]; safety: EvidenceSafetyCheck } {
	const snapshots = db
		.select({
			id: table.snapshots.id,
			stage: table.snapshots.stage,
			verdict: table.snapshots.verdict,
			createdBy: table.snapshots.createdBy,
			createdAt: table.snapshots.createdAt
		})
		.from(table.snapshots)
		.where(eq(table.snapshots.jobId, jobId))
		.all()
		.map((s) => ({ ...s, createdAt: s.createdAt.getTime() }));
	const soakRuns = db
		.select({
			id: table.soakRuns.id,
			status: table.soakRuns.status,
			timeScale: table.soakRuns.timeScale,
			startedAt: table.soakRuns.startedAt
		})
		.from(table.soakRuns)
		.where(eq(table.soakRuns.jobId, jobId))
		.all()
		.map((r) => ({ ...r, startedAt: r.startedAt.getTime() }));
	return { snapshots, soakRuns, safety: safetyEvidence(db, jobId) };
}

/** The shop's requirements judged for `signerId` on the job as it is now. */
export function evaluateJob(db: Db, jobId: number, signerId: string): SignOffEvaluation {
	return evaluateSignOff(getSetting(db, 'signOff'), evidenceOf(db, jobId), signerId);
}

// ── review ──────────────────────────────────────────────────────────────────

export interface ReviewSnapshot {
	id: number;
	label: string;
	stage: string;
	verdict: string;
	createdAt: string;
	createdByName: string;
	profileName: string | null;
	channels: {
		channel: number;
		frequencyHz: number | null;
		levelVrms: number | null;
		thdnPercent: number | null;
	}[];
	checksPassed: number;
	checksTotal: number;
	failedChecks: string[];
}

export interface ReviewSoakRun {
	id: number;
	status: string;
	timeScale: number;
	preset: string;
	drivePowerW: number;
	loadOhms: number;
	durationS: number;
	startedAt: string;
	readingCount: number;
	maxC: Record<string, number>;
	breaches: number;
}

export interface Review {
	evaluation: SignOffEvaluation;
	before: ReviewSnapshot | null;
	after: ReviewSnapshot | null;
	soakRuns: ReviewSoakRun[];
	signOffs: SignOffView[];
}

const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);

function reviewSnapshot(db: Db, id: number | null): ReviewSnapshot | null {
	if (id === null) return null;
	const row = db
		.select({ s: table.snapshots, name: table.users.name })
		.from(table.snapshots)
		.innerJoin(table.users, eq(table.users.id, table.snapshots.createdBy))
		.where(eq(table.snapshots.id, id))
		.get();
	if (!row) return null;
	const { s, name } = row;
	// Read defensively: the results shape belongs to the snapshot service.
	const results = (s.results ?? {}) as { channels?: Record<string, unknown>[] };
	const checks = (Array.isArray(s.checks) ? s.checks : []) as {
		pass?: boolean;
		label?: string;
		metric?: string;
		channel?: string | null;
	}[];
	const profile = s.profile as { name?: unknown } | null;
	return {
		id: s.id,
		label: s.label,
		stage: s.stage,
		verdict: s.verdict,
		createdAt: s.createdAt.toISOString(),
		createdByName: name,
		profileName: profile && typeof profile.name === 'string' ? profile.name : null,
		channels: (results.channels ?? []).map((c, i) => ({
			channel: num(c.channel) ?? i,
			frequencyHz: num(c.frequencyHz),
			levelVrms: num(c.levelVrms),
			thdnPercent: num(c.thdnPercent)
		})),
		checksPassed: checks.filter((c) => c.pass).length,
		checksTotal: checks.length,
		failedChecks: checks
			.filter((c) => !c.pass)
			.map((c) => `${String(c.label ?? c.metric ?? 'check')}${c.channel ? ` (${c.channel})` : ''}`)
	};
}

/** Everything the review page shows besides the job itself. */
export function getReview(db: Db, jobId: number, signerId: string): Review {
	const evaluation = evaluateJob(db, jobId, signerId);
	const record = coveredRecord(db, jobId);
	const soakRuns = record.soakRuns.map((r) => {
		const summary = (r.summary ?? {}) as { probes?: Record<string, { maxC?: number }>; breaches?: unknown[] };
		const maxC: Record<string, number> = {};
		for (const [probe, p] of Object.entries(summary.probes ?? {}))
			if (num(p?.maxC) !== null) maxC[probe] = p.maxC!;
		return {
			id: r.id,
			status: r.status,
			timeScale: r.timeScale,
			preset: r.preset,
			drivePowerW: r.drivePowerW,
			loadOhms: r.loadOhms,
			durationS: r.durationS,
			startedAt: r.startedAt,
			readingCount: r.readingCount,
			maxC,
			breaches: Array.isArray(summary.breaches) ? summary.breaches.length : 0
		};
	});
	return {
		evaluation,
		before: reviewSnapshot(db, evaluation.latestBefore),
		after: reviewSnapshot(db, evaluation.latestAfter),
		soakRuns: soakRuns.reverse(),
		signOffs: listSignOffs(db, jobId)
	};
}

// ── signing ─────────────────────────────────────────────────────────────────

/** 409 naming each missing requirement, all at once. */
function missingError(missing: RequirementResult[]): DomainError {
	return new DomainError(
		'conflict',
		`Not ready for sign-off: ${missing.length} requirement${missing.length === 1 ? '' : 's'} missing`,
		missing.map((m) => ({ path: `requirements.${m.key}`, message: `${m.label} — ${m.detail}` }))
	);
}

function assertAwaitingReview(db: Conn, jobId: number): table.Job {
	const job = db.select().from(table.jobs).where(eq(table.jobs.id, jobId)).get();
	if (!job) throw new DomainError('not-found', 'No such job');
	if (job.status !== 'awaiting-review')
		throw new DomainError(
			'conflict',
			'Only a job awaiting sign-off can be signed: the technician moves it there when the work is tested'
		);
	return job;
}

/**
 * Sign a job: approve it (the job becomes signed off and locked) or send it back to the bench.
 * 400 bad input; 403 not a supervisor/admin, or the four-eyes rule; 404 no job; 409 not awaiting
 * sign-off, or (approval) requirements missing, listed; 401 wrong password (counted like a failed
 * sign-in); 429 too many wrong passwords. The signature, the status change and the audit entry
 * commit together.
 */
export async function signOffJob(
	db: Db,
	jobId: number,
	input: SignOffInput,
	signer: Signer,
	ip: string
): Promise<SignOffView> {
	const data = validate(signOffInputSchema, input);
	if (signer.role !== 'supervisor' && signer.role !== 'admin')
		throw new DomainError('forbidden', 'Only a supervisor or admin may sign a job off');
	assertAwaitingReview(db, jobId);
	if (data.decision === 'approve') {
		const evaluation = evaluateJob(db, jobId, signer.id);
		if (evaluation.missing.length) throw missingError(evaluation.missing);
		if (!evaluation.fourEyes.ok) throw new DomainError('forbidden', FOUR_EYES_MESSAGE);
	}

	const confirmed = await confirmPassword(db, { userId: signer.id, password: data.password, ip });
	if (!confirmed.ok) {
		if (confirmed.reason === 'rate-limited')
			throw new DomainError(
				'too-many-requests',
				`Too many wrong passwords: try again in ${waitText(confirmed.retryAfterS)}`,
				undefined,
				{ 'retry-after': String(confirmed.retryAfterS) }
			);
		throw new DomainError(
			'unauthenticated',
			'That password is not right: re-enter your own password to sign',
			[{ path: 'password', message: 'Wrong password' }]
		);
	}

	const id = db.transaction((tx) => {
		// Judged again inside the transaction: the password check awaited, and the job may have moved.
		const job = assertAwaitingReview(tx, jobId);
		const evaluation = evaluateSignOff(getSetting(db, 'signOff'), evidenceOf(tx, jobId), signer.id);
		if (data.decision === 'approve') {
			if (evaluation.missing.length) throw missingError(evaluation.missing);
			if (!evaluation.fourEyes.ok) throw new DomainError('forbidden', FOUR_EYES_MESSAGE);
		}
		const now = new Date();
		const { covered, sha256 } = fingerprint(coveredRecord(tx, jobId));
		const meaning = SIGN_OFF_MEANINGS[data.decision];
		const selfSignOff = data.decision === 'approve' && evaluation.fourEyes.signerCapturedAfter;
		const row = tx
			.insert(table.signOffs)
			.values({
				jobId,
				signerId: signer.id,
				signerName: confirmed.user.name,
				signerRole: confirmed.user.role,
				decision: data.decision,
				meaning,
				comment: data.comment,
				signedAt: now,
				requirements: evaluation.requirements,
				selfSignOff,
				covered,
				sha256
			})
			.returning({ id: table.signOffs.id })
			.get();
		const approve = data.decision === 'approve';
		recordStatusChange(tx, jobId, {
			from: job.status,
			to: approve ? 'approved' : SEND_BACK_TO,
			actorId: signer.id,
			note: `${approve ? 'Signed off' : 'Sent back'}${data.comment ? `: ${data.comment}` : ''}`,
			at: now
		});
		audit(tx, {
			actorId: signer.id,
			action: approve ? 'sign-off.approved' : 'sign-off.sent-back',
			jobId,
			subject: `job #${jobId}`,
			detail: {
				signOffId: row.id,
				meaning,
				comment: data.comment,
				sha256,
				selfSignOff,
				requirements: evaluation.requirements.map((r) => ({ key: r.key, met: r.met }))
			},
			at: now
		});
		return row.id;
	});
	return listSignOffs(db, jobId).find((s) => s.id === id)!;
}

// ── reading and checking ────────────────────────────────────────────────────

/** Every signature on the job, newest first, each saying whether a reopening superseded it. */
export function listSignOffs(db: Conn, jobId: number): SignOffView[] {
	const rows = db
		.select({ s: table.signOffs, sup: table.signOffSupersessions, byName: table.users.name })
		.from(table.signOffs)
		.leftJoin(table.signOffSupersessions, eq(table.signOffSupersessions.signOffId, table.signOffs.id))
		.leftJoin(table.users, eq(table.users.id, table.signOffSupersessions.supersededBy))
		.where(eq(table.signOffs.jobId, jobId))
		.orderBy(desc(table.signOffs.signedAt), desc(table.signOffs.id))
		.all();
	return rows.map(({ s, sup, byName }) => ({
		id: s.id,
		jobId: s.jobId,
		signerId: s.signerId,
		signerName: s.signerName,
		signerRole: s.signerRole,
		decision: s.decision,
		meaning: s.meaning,
		comment: s.comment,
		signedAt: s.signedAt.toISOString(),
		requirements: s.requirements as RequirementResult[],
		selfSignOff: s.selfSignOff,
		sha256: s.sha256,
		superseded: sup
			? { at: sup.supersededAt.toISOString(), byName: byName ?? null, reason: sup.reason }
			: null
	}));
}

/** Recompute what `signOffId` covers and compare: intact, or what differs, in words. */
export function checkSignOff(db: Conn, signOffId: number): SignOffCheck {
	const row = db.select().from(table.signOffs).where(eq(table.signOffs.id, signOffId)).get();
	if (!row) throw new DomainError('not-found', 'No such sign-off');
	const now = coveredRecord(db, row.jobId);
	const { sha256 } = fingerprint(now);
	let differences: string[] = [];
	if (sha256 !== row.sha256) {
		let signed: CoveredRecord | null = null;
		try {
			signed = JSON.parse(row.covered) as CoveredRecord;
		} catch {
			signed = null;
		}
		differences = signed ? describeDifferences(signed, now) : [];
		if (!differences.length) differences = ['the stored record does not hash to the signed value'];
	}
	return { signOffId, intact: sha256 === row.sha256, sha256Now: sha256, differences };
}

/** The approval that stands on a job (not superseded), with its check; null when none. */
export function standingSignOff(db: Db, jobId: number): { signOff: SignOffView; check: SignOffCheck } | null {
	const row = db
		.select({ id: table.signOffs.id })
		.from(table.signOffs)
		.leftJoin(table.signOffSupersessions, eq(table.signOffSupersessions.signOffId, table.signOffs.id))
		.where(
			and(
				eq(table.signOffs.jobId, jobId),
				eq(table.signOffs.decision, 'approve'),
				isNull(table.signOffSupersessions.signOffId)
			)
		)
		.orderBy(desc(table.signOffs.signedAt), desc(table.signOffs.id))
		.get();
	if (!row) return null;
	const signOff = listSignOffs(db, jobId).find((s) => s.id === row.id)!;
	return { signOff, check: checkSignOff(db, row.id) };
}
