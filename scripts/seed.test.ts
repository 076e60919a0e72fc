// The demo seed: idempotent, covers every status and unit category, and its history
// follows the real transition rules; the large seed adds the asked-for number of jobs.
import { describe, expect, it } from 'vitest';
import { openDb } from '../src/lib/server/db/open';
import * as table from '../src/lib/server/db/schema';
import { signIn } from '../src/lib/server/auth';
import { getSettings } from '../src/lib/server/settings';
import { JOB_STATUSES, UNIT_CATEGORIES } from '../src/lib/schemas/enums';
import { nextStatuses } from '../src/lib/schemas/jobs';
import { DEMO_PASSWORD, DEMO_SHOP_NAME, seedDemo, seedLarge } from './seed';

describe('demo seed', () => {
	it('seeds an empty database once, with working demo sign-ins', async () => {
		const db = openDb(':memory:');
		expect(await seedDemo(db)).toBe(true);
		expect(await seedDemo(db)).toBe(false);
		expect(
			db
				.select()
				.from(table.users)
				.all()
				.map((u) => [u.email, u.role])
		).toEqual([
			['admin@example.com', 'admin'],
			['supervisor@example.com', 'supervisor'],
			['tech1@example.com', 'technician'],
			['tech2@example.com', 'technician']
		]);
		for (const email of ['admin@example.com', 'tech2@example.com']) {
			expect((await signIn(db, { email, password: DEMO_PASSWORD, ip: '127.0.0.1' })).ok).toBe(true);
		}
		expect(getSettings(db).shopName).toBe(DEMO_SHOP_NAME);
		// The bench needs limit profiles to pick from, owned by the demo supervisor.
		const profiles = db.select().from(table.limitProfiles).all();
		expect(profiles.length).toBeGreaterThanOrEqual(4);
		expect(new Set(profiles.map((p) => p.createdBy))).toEqual(new Set(['demosupervisor']));
	});

	it('covers every status and unit category, with customers, parts and log entries', async () => {
		const db = openDb(':memory:');
		await seedDemo(db);
		const jobs = db.select().from(table.jobs).all();
		expect(jobs.length).toBeGreaterThanOrEqual(12);
		expect(new Set(jobs.map((j) => j.status))).toEqual(new Set(JOB_STATUSES));
		expect(new Set(jobs.map((j) => j.category))).toEqual(new Set(UNIT_CATEGORIES));
		expect(db.select().from(table.customers).all().length).toBeGreaterThanOrEqual(12);
		expect(db.select().from(table.parts).all().length).toBeGreaterThan(0);
		expect(db.select().from(table.workLog).all().length).toBeGreaterThan(0);
	});

	it('writes history that the transition rules allow and that ends in each job’s status', async () => {
		const db = openDb(':memory:');
		await seedDemo(db);
		const history = db.select().from(table.jobStatusHistory).all();
		for (const job of db.select().from(table.jobs).all()) {
			const rows = history.filter((h) => h.jobId === job.id).sort((a, b) => a.id - b.id);
			expect(rows[0]).toMatchObject({ fromStatus: null, toStatus: 'received' });
			for (let i = 1; i < rows.length; i++) {
				expect(rows[i].fromStatus).toBe(rows[i - 1].toStatus);
				expect(nextStatuses(rows[i].fromStatus!)).toContain(rows[i].toStatus);
				expect(rows[i].createdAt.getTime()).toBeGreaterThanOrEqual(rows[i - 1].createdAt.getTime());
			}
			expect(rows.at(-1)!.toStatus).toBe(job.status);
			const approval = rows.find((r) => r.toStatus === 'approved');
			if (approval) expect(approval.userId).toBe('demosupervisor');
		}
	});

	it('adds generated jobs in bulk for the benchmark', async () => {
		const db = openDb(':memory:');
		await seedDemo(db);
		const before = db.select().from(table.jobs).all().length;
		expect(seedLarge(db, 500)).toBe(500);
		const jobs = db.select().from(table.jobs).all();
		expect(jobs.length).toBe(before + 500);
		expect(db.$client.pragma('foreign_key_check')).toEqual([]);
	});
});
