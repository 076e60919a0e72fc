// Sign-off: the shop's requirements (a setting), the signature request body, the meanings a
// signature carries, and the pure requirement evaluation and four-eyes rule, shared by the
// review page and the server. No server imports.
import { z } from 'zod';

// ── the shop's requirements (stored as the `signOff` setting) ───────────────

export const signOffSettingsSchema = z.object({
	/** The latest after snapshot must have a passing verdict. */
	requireAfterSnapshotPass: z.boolean(),
	/** The latest soak run that counts as proof must have passed. */
	requirePassedSoak: z.boolean(),
	/** Count a soak run on the accelerated simulator (time scale above 1) as proof. */
	countAcceleratedSoak: z.boolean(),
	/** One-person shops: a supervisor may sign off a job where they captured the after snapshot. */
	allowSelfSignOff: z.boolean(),
	/**
	 * The electrical safety check before return must be recorded, every item, none failed. A
	 * setting stored before this rule existed reads as on.
	 */
	requirePassedSafetyCheck: z.boolean().default(true)
});
export type SignOffSettings = z.infer<typeof signOffSettingsSchema>;

export const DEFAULT_SIGN_OFF_SETTINGS: SignOffSettings = {
	requireAfterSnapshotPass: true,
	requirePassedSoak: true,
	countAcceleratedSoak: false,
	allowSelfSignOff: false,
	requirePassedSafetyCheck: true
};

// ── the signature request ───────────────────────────────────────────────────

export const SIGN_OFF_DECISIONS = ['approve', 'send-back'] as const;
export type SignOffDecisionInput = (typeof SIGN_OFF_DECISIONS)[number];

/** What a signature means, in the words the record keeps. */
export const SIGN_OFF_MEANINGS: Record<SignOffDecisionInput, string> = {
	approve: 'approved for return to the customer',
	'send-back': 'sent back'
};

export const SIGN_OFF_COMMENT_MAX = 2000;
export const SEND_BACK_COMMENT_MIN = 3;

export const signOffInputSchema = z
	.object({
		decision: z.enum(SIGN_OFF_DECISIONS, 'Decision is approve or send-back'),
		comment: z
			.string('Comment is text (it may be empty for an approval)')
			.trim()
			.max(SIGN_OFF_COMMENT_MAX, `At most ${SIGN_OFF_COMMENT_MAX} characters`),
		password: z.string('Re-enter your password to sign').min(1, 'Re-enter your password to sign').max(1024)
	})
	.strict()
	.superRefine((v, ctx) => {
		if (v.decision === 'send-back' && v.comment.length < SEND_BACK_COMMENT_MIN)
			ctx.addIssue({
				code: 'custom',
				path: ['comment'],
				message: `Say what needs doing before it comes back (at least ${SEND_BACK_COMMENT_MIN} characters)`
			});
	});
export type SignOffInput = z.infer<typeof signOffInputSchema>;

// ── requirement evaluation ──────────────────────────────────────────────────

export interface EvidenceSnapshot {
	id: number;
	stage: 'before' | 'after' | 'other';
	verdict: 'pass' | 'fail' | 'none';
	createdBy: string;
	/** ms since the epoch */
	createdAt: number;
}

export interface EvidenceSoakRun {
	id: number;
	status: 'running' | 'passed' | 'failed' | 'aborted';
	/** 1 on real hardware; above 1 on the accelerated simulator. */
	timeScale: number;
	startedAt: number;
}

export type RequirementKey = 'after-snapshot-pass' | 'passed-soak' | 'passed-safety-check';

/** The safety check before return as the sign-off judges it (see `safetyStatus` in `$lib/worksheets`). */
export interface EvidenceSafetyCheck {
	state: 'none' | 'incomplete' | 'failed' | 'passed';
	problems: string[];
}

export interface RequirementResult {
	key: RequirementKey;
	label: string;
	met: boolean;
	/** Why, in words: which snapshot or run decided it. */
	detail: string;
}

export interface FourEyes {
	/** The signer captured the latest after snapshot. */
	signerCapturedAfter: boolean;
	/** The shop allows it (one-person shop). */
	allowed: boolean;
	/** The signer may approve as far as this rule goes. */
	ok: boolean;
}

export interface SignOffEvaluation {
	requirements: RequirementResult[];
	missing: RequirementResult[];
	fourEyes: FourEyes;
	latestBefore: number | null;
	latestAfter: number | null;
}

const latest = <T extends { createdAt?: number; startedAt?: number; id: number }>(rows: T[]): T | undefined =>
	[...rows]
		.sort((a, b) => (a.createdAt ?? a.startedAt ?? 0) - (b.createdAt ?? b.startedAt ?? 0) || a.id - b.id)
		.at(-1);

/**
 * What the shop's settings require before `signerId` may approve, judged on the job's
 * snapshots and soak runs. Pure: the review page and the sign-off service both call it.
 */
export function evaluateSignOff(
	settings: SignOffSettings,
	evidence: { snapshots: EvidenceSnapshot[]; soakRuns: EvidenceSoakRun[]; safety?: EvidenceSafetyCheck },
	signerId: string
): SignOffEvaluation {
	const before = latest(evidence.snapshots.filter((s) => s.stage === 'before'));
	const after = latest(evidence.snapshots.filter((s) => s.stage === 'after'));
	const requirements: RequirementResult[] = [];

	if (settings.requireAfterSnapshotPass) {
		const label = 'An after snapshot with a passing verdict';
		if (!after)
			requirements.push({ key: 'after-snapshot-pass', label, met: false, detail: 'No after snapshot yet' });
		else
			requirements.push({
				key: 'after-snapshot-pass',
				label,
				met: after.verdict === 'pass',
				detail:
					after.verdict === 'pass'
						? `Snapshot #${after.id} passed its limit checks`
						: after.verdict === 'fail'
							? `The latest after snapshot, #${after.id}, failed a limit check`
							: `The latest after snapshot, #${after.id}, has no verdict (no limit profile)`
			});
	}

	if (settings.requirePassedSoak) {
		const label = settings.countAcceleratedSoak
			? 'A passed soak run'
			: 'A passed soak run on real hardware (accelerated simulator runs do not count)';
		const finished = evidence.soakRuns.filter((r) => r.status !== 'running');
		const counted = finished.filter((r) => settings.countAcceleratedSoak || r.timeScale <= 1);
		const last = latest(counted);
		let detail: string;
		if (last) {
			detail =
				last.status === 'passed'
					? `Soak run #${last.id} passed`
					: `The latest soak run, #${last.id}, ${last.status === 'failed' ? 'failed' : 'was aborted'}`;
		} else if (finished.length) {
			const fast = latest(finished.filter((r) => r.timeScale > 1))!;
			detail = `Soak run #${fast.id} ran on the accelerated simulator (×${fast.timeScale}), which the shop does not count as proof`;
		} else {
			detail = evidence.soakRuns.length ? 'The soak run has not finished' : 'No soak run yet';
		}
		requirements.push({ key: 'passed-soak', label, met: last?.status === 'passed', detail });
	}

	if (settings.requirePassedSafetyCheck) {
		const safety = evidence.safety ?? { state: 'none', problems: [] };
		const detail =
			safety.state === 'passed'
				? 'Every item recorded; none failed'
				: safety.state === 'none'
					? 'No safety check recorded: fill in the safety check worksheet'
					: `${safety.state === 'failed' ? 'A safety item failed' : 'The safety check is incomplete'}: ${safety.problems.join('; ')}`;
		requirements.push({
			key: 'passed-safety-check',
			label: 'A passed electrical safety check before return',
			met: safety.state === 'passed',
			detail
		});
	}

	const signerCapturedAfter = !!after && after.createdBy === signerId;
	const fourEyes: FourEyes = {
		signerCapturedAfter,
		allowed: settings.allowSelfSignOff,
		ok: !signerCapturedAfter || settings.allowSelfSignOff
	};
	return {
		requirements,
		missing: requirements.filter((r) => !r.met),
		fourEyes,
		latestBefore: before?.id ?? null,
		latestAfter: after?.id ?? null
	};
}

/** The four-eyes refusal, said once for the API and the review page. */
export const FOUR_EYES_MESSAGE =
	'You captured the after snapshot on this job, so another supervisor must sign it off (an admin can allow self sign-off for a one-person shop in Settings)';

// ── views ───────────────────────────────────────────────────────────────────

export interface SignOffView {
	id: number;
	jobId: number;
	signerId: string;
	signerName: string;
	signerRole: string;
	decision: SignOffDecisionInput;
	meaning: string;
	comment: string;
	signedAt: string;
	requirements: RequirementResult[];
	selfSignOff: boolean;
	sha256: string;
	superseded: { at: string; byName: string | null; reason: string } | null;
}

export interface SignOffCheck {
	signOffId: number;
	/** The covered record hashes the same today. */
	intact: boolean;
	/** The hash recomputed now. */
	sha256Now: string;
	/** What differs, in words ("snapshot #12 changed", "part #4 added"). */
	differences: string[];
}
