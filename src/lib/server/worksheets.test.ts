// The worksheet service on an in-memory database with the real migrations: save with an
// optimistic version check, immutable history, audit entries, validation on write and on read,
// the lock on a signed-off job, and the gates: a stored-for-years unit gets no soak or capture
// until its first power-up is complete, and no sign-off without a passed safety check.
import { beforeEach, describe, expect, it } from 'vitest';
import { eq } from 'drizzle-orm';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { hashPassword } from './auth';
import { isDomainError } from './errors';
import { changeStatus, createJob } from './jobs';
import { listAudit } from './audit';
import { updateSettings } from './settings';
import { createRun } from './soak';
import { prepareSnapshot } from './snapshots';
import { checkSignOff, signOffJob } from './sign-off';
import { getWorksheet, saveWorksheet, worksheetHistory, worksheetSummary } from './worksheets';
import { encodeWav } from '../dsp/wav';
import { emptySheet } from '../schemas/worksheets';
import { DEFAULT_SIGN_OFF_SETTINGS } from '../schemas/sign-off';
import { intakeExample, passedSafetySheet, powerUpExample } from '../worksheet-examples';

const PASSWORD = 'correct horse battery staple';
let db: Db;
let passwordHash: string;
let job: number;

function refusal(fn: () => unknown): { status: number; message: string; issues?: unknown } {
	try {
		fn();
	} catch (e) {
		if (isDomainError(e))
			return { status: e.status, message: e.message, ...(e.issues ? { issues: e.issues } : {}) };
		throw e;
	}
	throw new Error('expected a refusal');
}

const soakInput = {
	preset: 'custom' as const,
	custom: { watts: 5, loadOhms: 8, frequencyHz: 1000, durationS: 3600, channels: ['left' as const] }
};

function tone(): Uint8Array {
	const n = 8192;
	const s = new Float32Array(n);
	for (let i = 0; i < n; i++) s[i] = 0.5 * Math.sin((2 * Math.PI * 1000 * i) / 48000);
	return encodeWav([s], 48000);
}

beforeEach(async () => {
	db = openDb(':memory:');
	passwordHash ??= await hashPassword(PASSWORD);
	for (const [id, name, role] of [
		['tech', 'Tamsin Oakridge', 'technician'],
		['sup', 'Rowan Thistlewood', 'supervisor']
	] as const)
		db.insert(table.users)
			.values({ id, email: `${id}@example.com`, name, role, passwordHash })
			.run();
	job = createJob(
		db,
		{
			customerName: 'Ilse Fernwhistle',
			category: 'valve-amplifier',
			make: 'Corrowby',
			model: 'VT-30',
			complaint: 'Stored in a loft since 1986',
			ratedPowerW: 30,
			ratedLoadOhms: 8
		},
		'tech'
	).id;
});

describe('saving a worksheet', () => {
	it('starts at version 0, saves whole sheets as versions 1, 2 …, keeps the history and audits each save', () => {
		expect(getWorksheet(db, job, 'intake')).toMatchObject({ data: null, version: 0, updatedByName: null });
		const first = saveWorksheet(db, job, 'intake', { version: 0, data: intakeExample() }, 'tech');
		expect(first).toMatchObject({ version: 1, updatedByName: 'Tamsin Oakridge', data: intakeExample() });
		const second = saveWorksheet(
			db,
			job,
			'intake',
			{ version: 1, data: intakeExample({ storedForYears: true }) },
			'sup'
		);
		expect(second).toMatchObject({ version: 2, updatedByName: 'Rowan Thistlewood' });
		expect(worksheetHistory(db, job, 'intake').map((v) => [v.version, v.savedByName])).toEqual([
			[2, 'Rowan Thistlewood'],
			[1, 'Tamsin Oakridge']
		]);
		expect(listAudit(db, { job, action: 'worksheet.' }).items.map((e) => [e.action, e.detail])).toEqual([
			['worksheet.updated', { kind: 'intake', version: 2 }],
			['worksheet.created', { kind: 'intake', version: 1 }]
		]);
	});

	it('refuses a stale version with 409 naming who saved, and changes nothing', () => {
		saveWorksheet(db, job, 'intake', { version: 0, data: intakeExample() }, 'sup');
		const stale = refusal(() =>
			saveWorksheet(db, job, 'intake', { version: 0, data: intakeExample({ fuseFound: 'T1A' }) }, 'tech')
		);
		expect(stale.status).toBe(409);
		expect(stale.message).toMatch(
			/saved by Rowan Thistlewood .* \(version 1; you edited version 0\): reload it/
		);
		expect(getWorksheet(db, job, 'intake').data?.fuseFound).toBe(intakeExample().fuseFound);
		expect(worksheetHistory(db, job, 'intake')).toHaveLength(1);
	});

	it('answers 400 with every problem at once, and 404 for no job', () => {
		const bad = refusal(() =>
			saveWorksheet(
				db,
				job,
				'intake',
				{ version: 0, data: { ...intakeExample(), mainsSettingVoltsRms: 5, storedForYears: 'yes' } },
				'tech'
			)
		);
		expect(bad.status).toBe(400);
		expect((bad.issues as { path: string }[]).map((i) => i.path).sort()).toEqual([
			'mainsSettingVoltsRms',
			'storedForYears'
		]);
		expect(refusal(() => getWorksheet(db, 9999, 'intake')).status).toBe(404);
	});

	it('validates on read: a stored sheet that no longer validates reads as absent', () => {
		saveWorksheet(db, job, 'power-up', { version: 0, data: powerUpExample() }, 'tech');
		db.update(table.jobWorksheets)
			.set({ data: { steps: 'garbled' } })
			.where(eq(table.jobWorksheets.jobId, job))
			.run();
		expect(getWorksheet(db, job, 'power-up')).toMatchObject({ data: null, version: 1 });
	});

	it('keeps history rows immutable (trigger)', () => {
		saveWorksheet(db, job, 'bias', { version: 0, data: emptySheet('bias') }, 'tech');
		expect(() => db.$client.exec('UPDATE job_worksheet_versions SET version = 9')).toThrow(/immutable/);
		expect(() => db.$client.exec('DELETE FROM job_worksheet_versions')).toThrow(/immutable/);
	});

	it('refuses a change on a signed-off job (409)', () => {
		db.update(table.jobs).set({ status: 'approved' }).where(eq(table.jobs.id, job)).run();
		expect(
			refusal(() => saveWorksheet(db, job, 'safety', { version: 0, data: passedSafetySheet() }, 'tech'))
				.status
		).toBe(409);
	});
});

describe('the bench gate for a long-stored unit', () => {
	it('refuses a soak and a capture until the first power-up sheet is complete', () => {
		saveWorksheet(db, job, 'intake', { version: 0, data: intakeExample({ storedForYears: true }) }, 'tech');
		const soak = refusal(() => createRun(db, job, 'tech', soakInput));
		expect(soak.status).toBe(409);
		expect(soak.message).toMatch(
			/^No soak run yet\. This unit is marked “stored for years — do not apply full mains”/
		);
		const capture = refusal(() =>
			prepareSnapshot(db, {
				jobId: job,
				userId: 'tech',
				wav: tone(),
				meta: { label: 'Before', stage: 'before' }
			})
		);
		expect(capture).toMatchObject({ status: 409, message: expect.stringMatching(/^No capture yet/) });

		saveWorksheet(db, job, 'power-up', { version: 0, data: powerUpExample({ finished: false }) }, 'tech');
		expect(refusal(() => createRun(db, job, 'tech', soakInput)).message).toMatch(
			/Mark the power-up finished/
		);
		saveWorksheet(db, job, 'power-up', { version: 1, data: powerUpExample() }, 'tech');
		expect(createRun(db, job, 'tech', soakInput).id).toBeGreaterThan(0);
		expect(worksheetSummary(db, job).gate.blocked).toBe(false);
	});

	it('leaves a unit not marked stored-for-years alone', () => {
		saveWorksheet(db, job, 'intake', { version: 0, data: intakeExample() }, 'tech');
		expect(createRun(db, job, 'tech', soakInput).id).toBeGreaterThan(0);
	});
});

describe('sign-off needs a passed safety check (shop setting, on by default)', () => {
	it('refuses approval without one, naming what is missing, and signs once it has passed', async () => {
		expect(DEFAULT_SIGN_OFF_SETTINGS.requirePassedSafetyCheck).toBe(true);
		// Only the safety rule in play here: the snapshot and soak rules have their own tests.
		updateSettings(db, {
			signOff: { ...DEFAULT_SIGN_OFF_SETTINGS, requireAfterSnapshotPass: false, requirePassedSoak: false }
		});
		for (const s of ['diagnosing', 'repairing', 'testing', 'awaiting-review'] as const)
			changeStatus(db, job, { status: s }, { id: 'tech', role: 'technician' });
		const approve = { decision: 'approve' as const, comment: '', password: PASSWORD };
		const sup = { id: 'sup', role: 'supervisor' as const };
		let refused: { status: number; issues?: unknown } | null = null;
		try {
			await signOffJob(db, job, approve, sup, '10.0.0.1');
		} catch (e) {
			if (isDomainError(e)) refused = { status: e.status, issues: e.issues };
		}
		expect(refused).toEqual({
			status: 409,
			issues: [
				{
					path: 'requirements.passed-safety-check',
					message:
						'A passed electrical safety check before return — No safety check recorded: fill in the safety check worksheet'
				}
			]
		});
		const failed = passedSafetySheet({
			mainsCord: { result: 'fail', instrument: 'Visual', note: 'Cut sheath' }
		});
		saveWorksheet(db, job, 'safety', { version: 0, data: failed }, 'tech');
		await expect(signOffJob(db, job, approve, sup, '10.0.0.1')).rejects.toMatchObject({
			status: 409,
			issues: [
				{
					path: 'requirements.passed-safety-check',
					message: expect.stringMatching(/A safety item failed: Mains cord and strain relief: failed/)
				}
			]
		});
		saveWorksheet(db, job, 'safety', { version: 1, data: passedSafetySheet() }, 'tech');
		const signed = await signOffJob(db, job, approve, sup, '10.0.0.1');
		expect(signed.requirements).toEqual([expect.objectContaining({ key: 'passed-safety-check', met: true })]);
	});

	it('a shop may turn the rule off', async () => {
		updateSettings(db, {
			signOff: {
				...DEFAULT_SIGN_OFF_SETTINGS,
				requireAfterSnapshotPass: false,
				requirePassedSoak: false,
				requirePassedSafetyCheck: false
			}
		});
		for (const s of ['diagnosing', 'repairing', 'testing', 'awaiting-review'] as const)
			changeStatus(db, job, { status: s }, { id: 'tech', role: 'technician' });
		const signed = await signOffJob(
			db,
			job,
			{ decision: 'approve', comment: '', password: PASSWORD },
			{ id: 'sup', role: 'supervisor' },
			'10.0.0.2'
		);
		expect(signed.requirements).toEqual([]);
	});
});

describe('the signature covers the worksheets', () => {
	it('hashes them with the record and names a changed sheet when the hash no longer matches', async () => {
		updateSettings(db, {
			signOff: { ...DEFAULT_SIGN_OFF_SETTINGS, requireAfterSnapshotPass: false, requirePassedSoak: false }
		});
		saveWorksheet(db, job, 'safety', { version: 0, data: passedSafetySheet() }, 'tech');
		for (const s of ['diagnosing', 'repairing', 'testing', 'awaiting-review'] as const)
			changeStatus(db, job, { status: s }, { id: 'tech', role: 'technician' });
		const signed = await signOffJob(
			db,
			job,
			{ decision: 'approve', comment: '', password: PASSWORD },
			{ id: 'sup', role: 'supervisor' },
			'10.0.0.3'
		);
		const row = db.select().from(table.signOffs).where(eq(table.signOffs.id, signed.id)).get()!;
		expect(JSON.parse(row.covered).worksheets).toEqual([
			{ kind: 'safety', version: 1, data: passedSafetySheet() }
		]);
		expect(checkSignOff(db, signed.id).intact).toBe(true);
		// Bypassing the lock (the service refuses a signed-off job) to show the check notices.
		db.update(table.jobWorksheets)
			.set({ version: 2, data: passedSafetySheet({ earthed: false }) })
			.where(eq(table.jobWorksheets.jobId, job))
			.run();
		expect(checkSignOff(db, signed.id)).toMatchObject({
			intact: false,
			differences: ['the safety worksheet changed (version 1 → 2)']
		});
	});
});
