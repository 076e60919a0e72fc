// Sign-off on an in-memory database with the real migrations: the canonical hash (stable across
// key order, changed by any covered figure, audio hash or reading count), the requirement
// evaluation, the four-eyes rule, the signature (password, 401/403/409), immutability by
// trigger, the check on open, supersession on reopening, and the audit entries each step writes.
import { beforeEach, describe, expect, it } from 'vitest';
import { eq, sql } from 'drizzle-orm';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { hashPassword } from './auth';
import { isDomainError } from './errors';
import { changeStatus, createJob, addPart, reopenJob, updatePart } from './jobs';
import { listAudit } from './audit';
import { updateSettings } from './settings';
import { canonicalJson, fingerprint, sha256Hex, type CoveredRecord } from './sign-off-hash';
import { checkSignOff, coveredRecord, listSignOffs, signOffJob, standingSignOff } from './sign-off';
import {
	DEFAULT_SIGN_OFF_SETTINGS,
	evaluateSignOff,
	type EvidenceSnapshot,
	type EvidenceSoakRun
} from '../schemas/sign-off';
import { partSchema } from '../schemas/jobs';
import { saveWorksheet } from './worksheets';
import { passedSafetySheet } from '../worksheet-examples';

const PASSWORD = 'correct horse battery staple';
let db: Db;
let passwordHash: string;

async function refusal(
	fn: () => Promise<unknown>
): Promise<{ status: number; message: string; issues?: unknown }> {
	try {
		await fn();
	} catch (e) {
		if (isDomainError(e))
			return { status: e.status, message: e.message, ...(e.issues ? { issues: e.issues } : {}) };
		throw e;
	}
	throw new Error('expected a refusal');
}

const SUP = { id: 'sup', role: 'supervisor' as const };
const SUP2 = { id: 'sup2', role: 'supervisor' as const };
const TECH = { id: 'tech', role: 'technician' as const };

function addUser(id: string, name: string, role: 'technician' | 'supervisor' | 'admin') {
	db.insert(table.users)
		.values({ id, email: `${id}@example.com`, name, role, passwordHash })
		.run();
}

let wavSeq = 0;
/** A stored snapshot (rows written directly: the snapshot service's analysis is not under test here). */
function snapshot(
	jobId: number,
	stage: 'before' | 'after',
	verdict: 'pass' | 'fail',
	by = 'tech',
	thdnPercent = 0.01
) {
	const s = db
		.insert(table.snapshots)
		.values({
			jobId,
			createdBy: by,
			label: `${stage} capture`,
			stage,
			sampleRateHz: 48000,
			channelCount: 1,
			sampleCount: 48000,
			fullScaleVolts: 10,
			results: { channels: [{ channel: 0, frequencyHz: 1000, levelVrms: 2.83, thdnPercent }] },
			verdict,
			checks: [{ label: 'THD+N', pass: verdict === 'pass' }],
			spectrum: { fftSize: 8192, window: 'hann', channels: [] },
			createdAt: new Date(Date.now() + wavSeq * 1000)
		})
		.returning()
		.get();
	db.insert(table.snapshotAudio)
		.values({ snapshotId: s.id, sha256: sha256Hex(`wav ${++wavSeq}`), wav: Buffer.from([wavSeq]) })
		.run();
	return s.id;
}

function soak(jobId: number, status: 'passed' | 'failed' | 'running', timeScale = 1, readings = 3) {
	const r = db
		.insert(table.soakRuns)
		.values({
			jobId,
			createdBy: 'tech',
			preset: 'eighth-power-60',
			frequencyHz: 1000,
			loadOhms: 8,
			drivePowerW: 12.5,
			driveVrms: 10,
			durationS: 3600,
			timeScale,
			channels: ['left'],
			limits: {},
			probes: ['hs-left'],
			status,
			startedAt: new Date(Date.now() + wavSeq++ * 1000),
			endedAt: status === 'running' ? null : new Date(),
			summary: { probes: { 'hs-left': { maxC: 48.2 } }, breaches: [] }
		})
		.returning()
		.get();
	for (let i = 0; i < readings; i++)
		db.insert(table.soakReadings)
			.values({ runId: r.id, probe: 'hs-left', seq: i, t: i * 1000, celsius: 30 + i })
			.run();
	return r.id;
}

/** A job walked to awaiting-review by the technician. */
function reviewJob(): number {
	const job = createJob(
		db,
		{
			customerName: 'Ilse Fernwhistle',
			category: 'power-amplifier',
			make: 'Quorvane',
			model: 'PA-220',
			complaint: 'Hum'
		},
		'tech'
	);
	for (const s of ['diagnosing', 'repairing', 'testing', 'awaiting-review'] as const)
		changeStatus(db, job.id, { status: s }, TECH);
	return job.id;
}

/** A job that meets the default requirements: a passing after snapshot and a passed real soak. */
function readyJob(): number {
	const id = reviewJob();
	snapshot(id, 'before', 'fail');
	snapshot(id, 'after', 'pass');
	soak(id, 'passed');
	saveWorksheet(db, id, 'safety', { version: 0, data: passedSafetySheet() }, 'tech');
	addPart(
		db,
		id,
		partSchema.parse({ refDes: 'C12', description: 'Filter capacitor', value: '4700 µF 63 V' }),
		'tech'
	);
	return id;
}

beforeEach(async () => {
	db = openDb(':memory:');
	passwordHash ??= await hashPassword(PASSWORD);
	addUser('tech', 'Tamsin Oakridge', 'technician');
	addUser('sup', 'Rowan Thistlewood', 'supervisor');
	addUser('sup2', 'Odile Brackwater', 'supervisor');
});

// ── the canonical hash ──────────────────────────────────────────────────────

describe('canonical hash of the covered record', () => {
	const record = (): CoveredRecord => ({
		version: 1,
		jobId: 7,
		snapshots: [
			{
				id: 1,
				stage: 'after',
				label: 'After recap',
				verdict: 'pass',
				results: { channels: [{ channel: 0, thdnPercent: 0.012, levelVrms: 2.83 }] },
				checks: [{ pass: true }],
				audioSha256: 'a'.repeat(64),
				createdBy: 'tech',
				createdAt: '2026-12-01T10:00:00.000Z'
			}
		],
		soakRuns: [
			{
				id: 3,
				status: 'passed',
				preset: 'eighth-power-60',
				timeScale: 1,
				frequencyHz: 1000,
				loadOhms: 8,
				drivePowerW: 12.5,
				durationS: 3600,
				startedAt: '2026-12-01T11:00:00.000Z',
				endedAt: '2026-12-01T12:00:00.000Z',
				abortReason: null,
				summary: { probes: { left: { maxC: 48 } } },
				readingCount: 720
			}
		],
		parts: []
	});

	it('is the same whatever order the keys were written in (RFC 8785 sorts them)', () => {
		const a = record();
		// The same facts, keys written backwards at every level.
		const reverse = (v: unknown): unknown =>
			Array.isArray(v)
				? v.map(reverse)
				: v && typeof v === 'object'
					? Object.fromEntries(
							Object.entries(v)
								.reverse()
								.map(([k, x]) => [k, reverse(x)])
						)
					: v;
		const b = reverse(a) as CoveredRecord;
		expect(JSON.stringify(a)).not.toBe(JSON.stringify(b));
		expect(fingerprint(b).sha256).toBe(fingerprint(a).sha256);
		// RFC 8785 §3.2.3 (tests/REFERENCES.md, Sign-off fingerprints): members sorted by key; no whitespace.
		expect(canonicalJson({ b: 1, a: [2, { d: 'x', c: null }] })).toBe('{"a":[2,{"c":null,"d":"x"}],"b":1}');
	});

	it('is the SHA-256 of the canonical text (FIPS 180-4 test vector for "abc")', () => {
		// FIPS 180-4 / NIST example: SHA-256("abc") (tests/REFERENCES.md, Sign-off fingerprints).
		expect(sha256Hex('abc')).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
		const { covered, sha256 } = fingerprint(record());
		expect(sha256).toBe(sha256Hex(covered));
	});

	it('changes when a covered figure, an audio hash or a reading count changes', () => {
		const base = fingerprint(record()).sha256;
		const figure = record();
		(figure.snapshots[0].results as { channels: { thdnPercent: number }[] }).channels[0].thdnPercent = 0.013;
		const audio = record();
		audio.snapshots[0].audioSha256 = 'b'.repeat(64);
		const readings = record();
		readings.soakRuns[0].readingCount = 719;
		const part = record();
		part.parts.push({
			id: 1,
			refDes: 'Q3',
			description: 'Output transistor',
			value: null,
			quantity: 1,
			unitCostCents: 450,
			supplier: null,
			state: 'fitted',
			verificationNote: null
		});
		const hashes = [figure, audio, readings, part].map((r) => fingerprint(r).sha256);
		for (const h of hashes) expect(h).not.toBe(base);
		expect(new Set(hashes).size).toBe(4);
	});
});

// ── requirements and four-eyes ──────────────────────────────────────────────

describe('requirement evaluation', () => {
	const snap = (
		id: number,
		stage: 'before' | 'after',
		verdict: 'pass' | 'fail' | 'none',
		createdBy = 'tech'
	): EvidenceSnapshot => ({
		id,
		stage,
		verdict,
		createdBy,
		createdAt: id * 1000
	});
	const run = (id: number, status: EvidenceSoakRun['status'], timeScale = 1): EvidenceSoakRun => ({
		id,
		status,
		timeScale,
		startedAt: id * 1000
	});
	const evalWith = (
		snapshots: EvidenceSnapshot[],
		soakRuns: EvidenceSoakRun[],
		settings = DEFAULT_SIGN_OFF_SETTINGS,
		signer = 'sup'
	) => evaluateSignOff(settings, { snapshots, soakRuns, safety: { state: 'passed', problems: [] } }, signer);

	it('needs an after snapshot, and the latest one must pass', () => {
		expect(evalWith([], [run(1, 'passed')]).missing.map((m) => [m.key, m.detail])).toEqual([
			['after-snapshot-pass', 'No after snapshot yet']
		]);
		const failedLater = evalWith([snap(1, 'after', 'pass'), snap(2, 'after', 'fail')], [run(1, 'passed')]);
		expect(failedLater.missing.map((m) => m.detail)).toEqual([
			'The latest after snapshot, #2, failed a limit check'
		]);
		const noProfile = evalWith([snap(1, 'after', 'none')], [run(1, 'passed')]);
		expect(noProfile.missing[0].detail).toMatch(/#1, has no verdict/);
		// A passing before snapshot is not an after snapshot.
		expect(evalWith([snap(1, 'before', 'pass')], [run(1, 'passed')]).missing[0].key).toBe(
			'after-snapshot-pass'
		);
		const ok = evalWith([snap(1, 'before', 'fail'), snap(2, 'after', 'pass')], [run(1, 'passed')]);
		expect(ok.missing).toEqual([]);
		expect([ok.latestBefore, ok.latestAfter]).toEqual([1, 2]);
	});

	it('needs a passed soak; an accelerated-simulator run is not proof unless the shop says so', () => {
		const after = [snap(1, 'after', 'pass')];
		expect(evalWith(after, []).missing.map((m) => m.detail)).toEqual(['No soak run yet']);
		expect(evalWith(after, [run(1, 'running')]).missing.map((m) => m.detail)).toEqual([
			'The soak run has not finished'
		]);
		expect(evalWith(after, [run(1, 'passed'), run(2, 'failed')]).missing[0].detail).toBe(
			'The latest soak run, #2, failed'
		);
		const fast = evalWith(after, [run(4, 'passed', 60)]);
		expect(fast.missing[0].detail).toBe(
			'Soak run #4 ran on the accelerated simulator (×60), which the shop does not count as proof'
		);
		// A real run passed earlier still counts when a later one was accelerated.
		expect(evalWith(after, [run(1, 'passed'), run(2, 'failed', 60)]).missing).toEqual([]);
		const counted = evalWith(after, [run(4, 'passed', 60)], {
			...DEFAULT_SIGN_OFF_SETTINGS,
			countAcceleratedSoak: true
		});
		expect(counted.missing).toEqual([]);
	});

	it('lists nothing the shop does not require', () => {
		const none = {
			...DEFAULT_SIGN_OFF_SETTINGS,
			requireAfterSnapshotPass: false,
			requirePassedSoak: false,
			requirePassedSafetyCheck: false
		};
		expect(evalWith([], [], none)).toMatchObject({ requirements: [], missing: [] });
	});

	it('four-eyes: the supervisor who captured the latest after snapshot may not approve unless allowed', () => {
		const mine = [snap(1, 'after', 'pass', 'sup')];
		expect(evalWith(mine, [run(1, 'passed')]).fourEyes).toEqual({
			signerCapturedAfter: true,
			allowed: false,
			ok: false
		});
		expect(evalWith(mine, [run(1, 'passed')], DEFAULT_SIGN_OFF_SETTINGS, 'sup2').fourEyes.ok).toBe(true);
		const alone = { ...DEFAULT_SIGN_OFF_SETTINGS, allowSelfSignOff: true };
		expect(evalWith(mine, [run(1, 'passed')], alone).fourEyes).toEqual({
			signerCapturedAfter: true,
			allowed: true,
			ok: true
		});
		// Capturing an older after snapshot does not count: the latest one is what is signed.
		expect(
			evalWith([snap(1, 'after', 'pass', 'sup'), snap(2, 'after', 'pass', 'tech')], [run(1, 'passed')])
				.fourEyes.ok
		).toBe(true);
	});
});

// ── signing ─────────────────────────────────────────────────────────────────

describe('signing a job off', () => {
	it('approves with the password: 201-shaped record, job signed off, history and audit written together', async () => {
		const id = readyJob();
		const signed = await signOffJob(
			db,
			id,
			{ decision: 'approve', comment: 'Figures within limits', password: PASSWORD },
			SUP,
			'10.0.0.5'
		);
		expect(signed).toMatchObject({
			jobId: id,
			signerId: 'sup',
			signerName: 'Rowan Thistlewood',
			decision: 'approve',
			meaning: 'approved for return to the customer',
			comment: 'Figures within limits',
			selfSignOff: false,
			superseded: null
		});
		expect(signed.sha256).toMatch(/^[0-9a-f]{64}$/);
		expect(signed.sha256).toBe(fingerprint(coveredRecord(db, id)).sha256);
		expect(signed.requirements.every((r) => r.met)).toBe(true);
		const job = db.select().from(table.jobs).where(eq(table.jobs.id, id)).get()!;
		expect(job.status).toBe('approved');
		const actions = listAudit(db, { job: id }).items.map((e) => e.action);
		expect(actions.slice(0, 2).sort()).toEqual(['job.status-changed', 'sign-off.approved']);
		expect(listAudit(db, { job: id, action: 'sign-off.approved' }).items[0].detail).toMatchObject({
			sha256: signed.sha256,
			meaning: 'approved for return to the customer'
		});
	});

	it('refuses a technician (403), a wrong password (401, nothing stored), and a job not awaiting sign-off (409)', async () => {
		const id = readyJob();
		const input = { decision: 'approve' as const, comment: '', password: PASSWORD };
		expect(await refusal(() => signOffJob(db, id, input, TECH, '10.0.0.6'))).toMatchObject({ status: 403 });
		expect(
			await refusal(() => signOffJob(db, id, { ...input, password: 'not my password' }, SUP, '10.0.0.6'))
		).toMatchObject({ status: 401, message: expect.stringMatching(/password is not right/) });
		expect(db.select().from(table.signOffs).all()).toEqual([]);
		const other = createJob(
			db,
			{ customerName: 'X', category: 'tuner', make: 'Orlund', model: 'T1', complaint: 'Drift' },
			'tech'
		);
		expect(await refusal(() => signOffJob(db, other.id, input, SUP, '10.0.0.6'))).toMatchObject({
			status: 409
		});
		expect(await refusal(() => signOffJob(db, 99999, input, SUP, '10.0.0.6'))).toMatchObject({ status: 404 });
	});

	it('counts wrong passwords like failed sign-ins: after the free tries the signer must wait (429)', async () => {
		const id = readyJob();
		const wrong = { decision: 'approve' as const, comment: '', password: 'wrong' };
		// SIGN_IN_LIMITS.pair.free = 3: three failures are free, the fourth starts a wait.
		for (let i = 0; i < 4; i++)
			expect((await refusal(() => signOffJob(db, id, wrong, SUP, '10.0.0.7'))).status).toBe(401);
		expect(
			await refusal(() => signOffJob(db, id, { ...wrong, password: PASSWORD }, SUP, '10.0.0.7'))
		).toMatchObject({ status: 429, message: expect.stringMatching(/try again in/) });
	});

	it('409 lists every missing requirement at once; sending back needs none of them but a comment', async () => {
		const id = reviewJob();
		soak(id, 'passed', 60);
		const refused = await refusal(() =>
			signOffJob(db, id, { decision: 'approve', comment: '', password: PASSWORD }, SUP, '10.0.0.8')
		);
		expect(refused.status).toBe(409);
		expect(refused.issues).toEqual([
			{
				path: 'requirements.after-snapshot-pass',
				message: 'An after snapshot with a passing verdict — No after snapshot yet'
			},
			{
				path: 'requirements.passed-soak',
				message:
					'A passed soak run on real hardware (accelerated simulator runs do not count) — Soak run #1 ran on the accelerated simulator (×60), which the shop does not count as proof'
			},
			{
				path: 'requirements.passed-safety-check',
				message:
					'A passed electrical safety check before return — No safety check recorded: fill in the safety check worksheet'
			}
		]);
		expect(
			await refusal(() =>
				signOffJob(db, id, { decision: 'send-back', comment: '', password: PASSWORD }, SUP, '10.0.0.8')
			)
		).toMatchObject({ status: 400 });
		const back = await signOffJob(
			db,
			id,
			{ decision: 'send-back', comment: 'Needs a real soak', password: PASSWORD },
			SUP,
			'10.0.0.8'
		);
		expect(back.meaning).toBe('sent back');
		expect(db.select().from(table.jobs).where(eq(table.jobs.id, id)).get()!.status).toBe('repairing');
	});

	it('four-eyes: refuses the supervisor who captured the after snapshot; allowed by the setting, the record says so', async () => {
		const id = reviewJob();
		snapshot(id, 'after', 'pass', 'sup');
		soak(id, 'passed');
		saveWorksheet(db, id, 'safety', { version: 0, data: passedSafetySheet() }, 'tech');
		const input = { decision: 'approve' as const, comment: 'ok', password: PASSWORD };
		expect(await refusal(() => signOffJob(db, id, input, SUP, '10.0.0.9'))).toMatchObject({
			status: 403,
			message: expect.stringMatching(/another supervisor must sign it off/)
		});
		updateSettings(db, { signOff: { ...DEFAULT_SIGN_OFF_SETTINGS, allowSelfSignOff: true } }, 'sup');
		const signed = await signOffJob(db, id, input, SUP, '10.0.0.9');
		expect(signed.selfSignOff).toBe(true);
		expect(listAudit(db, { action: 'settings.changed' }).items[0]).toMatchObject({ actorId: 'sup' });
	});

	it('the status route no longer approves: 409 pointing at the sign-off', async () => {
		const id = readyJob();
		expect(await refusal(async () => changeStatus(db, id, { status: 'approved' }, SUP))).toMatchObject({
			status: 409,
			message: expect.stringMatching(/sign-off/)
		});
		expect(await refusal(async () => changeStatus(db, id, { status: 'approved' }, TECH))).toMatchObject({
			status: 403
		});
	});
});

// ── after signing ───────────────────────────────────────────────────────────

describe('a signed job', () => {
	it('sign-offs and the audit trail refuse UPDATE and DELETE (triggers)', async () => {
		const id = readyJob();
		await signOffJob(db, id, { decision: 'approve', comment: 'ok', password: PASSWORD }, SUP2, '10.0.1.1');
		const exec = (q: string) => () => db.$client.exec(q);
		expect(exec(`UPDATE sign_offs SET comment = 'edited'`)).toThrow(/sign-offs are immutable/);
		expect(exec(`DELETE FROM sign_offs`)).toThrow(/sign-offs are immutable/);
		expect(exec(`UPDATE audit_log SET subject = 'x'`)).toThrow(/append-only/);
		expect(exec(`DELETE FROM audit_log`)).toThrow(/append-only/);
		reopenJob(db, id, { reason: 'Recheck the bias' }, SUP);
		expect(exec(`DELETE FROM sign_off_supersessions`)).toThrow(/supersessions are immutable/);
		expect(db.select().from(table.signOffs).all()).toHaveLength(1);
	});

	it('opening it recomputes the hash: intact, then names what changed', async () => {
		const id = readyJob();
		const signed = await signOffJob(
			db,
			id,
			{ decision: 'approve', comment: '', password: PASSWORD },
			SUP2,
			'10.0.1.2'
		);
		expect(standingSignOff(db, id)!.check).toMatchObject({ intact: true, differences: [] });
		// Tampering behind the app's back (the triggers guard snapshots, not parts or readings).
		const partId = db.select().from(table.parts).where(eq(table.parts.jobId, id)).get()!.id;
		db.run(sql`UPDATE parts SET quantity = 2 WHERE id = ${partId}`);
		const runId = db.select().from(table.soakRuns).where(eq(table.soakRuns.jobId, id)).get()!.id;
		db.run(sql`DELETE FROM soak_readings WHERE run_id = ${runId} AND seq = 0`);
		const check = checkSignOff(db, signed.id);
		expect(check.intact).toBe(false);
		expect(check.sha256Now).not.toBe(signed.sha256);
		expect(check.differences).toEqual([
			`soak run #${runId} changed (readingCount)`,
			`part #${partId} (C12) changed (quantity)`
		]);
	});

	it('reopening supersedes the sign-off (kept, marked) and writes the audit trail; the job takes edits again', async () => {
		const id = readyJob();
		const signed = await signOffJob(
			db,
			id,
			{ decision: 'approve', comment: '', password: PASSWORD },
			SUP2,
			'10.0.1.3'
		);
		reopenJob(db, id, { reason: 'Customer reports hum again' }, SUP);
		const [again] = listSignOffs(db, id);
		expect(again.id).toBe(signed.id);
		expect(again.superseded).toMatchObject({
			byName: 'Rowan Thistlewood',
			reason: 'Customer reports hum again'
		});
		expect(standingSignOff(db, id)).toBeNull();
		const trail = listAudit(db, { job: id, pageSize: 2 }).items.map((e) => e.action);
		expect(trail.sort()).toEqual(['job.reopened', 'sign-off.superseded']);
		const partId = db.select().from(table.parts).where(eq(table.parts.jobId, id)).get()!.id;
		updatePart(db, id, partId, { state: 'fitted' }, 'tech');
		expect(listAudit(db, { job: id, action: 'part.' }).items.map((e) => e.action)).toEqual([
			'part.updated',
			'part.added'
		]);
	});
});

// ── the trail's own filters ─────────────────────────────────────────────────

describe('audit listing', () => {
	it('filters by who, what, job and date range, newest first, with pages', () => {
		const a = reviewJob();
		const b = reviewJob();
		const all = listAudit(db, {});
		expect(all.total).toBe(10); // per job: created + 4 status changes
		expect(listAudit(db, { job: a }).items.every((e) => e.jobId === a)).toBe(true);
		expect(listAudit(db, { actor: 'tech', action: 'job.created' }).items.map((e) => e.jobId)).toEqual([b, a]);
		const page2 = listAudit(db, { pageSize: 4, page: 2 });
		expect(page2.items.map((e) => e.id)).toEqual(all.items.slice(4, 8).map((e) => e.id));
		const today = new Date().toISOString().slice(0, 10);
		expect(listAudit(db, { from: today, to: today }).total).toBe(10);
		expect(listAudit(db, { to: '2000-01-01' }).total).toBe(0);
		expect(() => listAudit(db, { from: '2026-02-30' })).toThrow();
		expect(() => listAudit(db, { action: 'job.exploded' as never })).toThrow();
	});
});
