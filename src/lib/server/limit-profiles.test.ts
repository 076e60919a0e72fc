import { beforeEach, describe, expect, it } from 'vitest';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import {
	createLimitProfile,
	deleteLimitProfile,
	getLimitProfile,
	listLimitProfiles,
	seedLimitProfiles,
	SEED_LIMIT_PROFILES,
	updateLimitProfile
} from './limit-profiles';
import { profileInputSchema } from '$lib/limit-profiles';
import { DomainError } from './errors';

let db: Db;
beforeEach(() => {
	db = openDb(':memory:');
	db.insert(table.users)
		.values({ id: 'u1', email: 'sup@example.com', name: 'Sup', role: 'supervisor', passwordHash: 'x' })
		.run();
});

const input = profileInputSchema.parse({
	name: 'Test profile',
	conditions: { generatorFrequencyHz: 1000 },
	limits: [{ metric: 'thdnPercent', op: 'le', value: 0.1, unit: '%' }]
});

describe('limit profile service', () => {
	it('creates, reads and lists with defaults filled', () => {
		const p = createLimitProfile(db, input, 'u1');
		expect(getLimitProfile(db, p.id)).toEqual({
			id: p.id,
			name: 'Test profile',
			description: null,
			conditions: { generatorFrequencyHz: 1000, bandLowHz: 20, bandHighHz: 20_000, weighting: 'none' },
			limits: [{ metric: 'thdnPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' }],
			archived: false
		});
		expect(listLimitProfiles(db).map((x) => x.name)).toEqual(['Test profile']);
	});

	it('refuses a duplicate name, case-insensitively', () => {
		createLimitProfile(db, input, 'u1');
		expect(() => createLimitProfile(db, { ...input, name: 'TEST PROFILE' }, 'u1')).toThrow(DomainError);
	});

	it('updates part of a profile and leaves the rest', () => {
		const p = createLimitProfile(db, input, 'u1');
		const u = updateLimitProfile(db, p.id, {
			description: 'tighter',
			limits: [{ ...input.limits[0], value: 0.05 }]
		});
		expect(u.description).toBe('tighter');
		expect(u.limits[0].value).toBe(0.05);
		expect(u.conditions.generatorFrequencyHz).toBe(1000);
		expect(() => updateLimitProfile(db, 9999, { description: 'x' })).toThrow(/No such/);
	});

	it('deletes an unused profile but archives one a snapshot refers to', () => {
		const unused = createLimitProfile(db, input, 'u1');
		expect(deleteLimitProfile(db, unused.id)).toEqual({ outcome: 'deleted' });
		expect(getLimitProfile(db, unused.id)).toBeNull();

		const used = createLimitProfile(db, { ...input, name: 'Used' }, 'u1');
		const customer = db.insert(table.customers).values({ name: 'C' }).returning().get();
		const job = db
			.insert(table.jobs)
			.values({ customerId: customer.id, category: 'receiver', make: 'M', model: 'X', complaint: 'hum' })
			.returning()
			.get();
		db.insert(table.snapshots)
			.values({
				jobId: job.id,
				createdBy: 'u1',
				label: 'x',
				stage: 'before',
				profileId: used.id,
				sampleRateHz: 48000,
				channelCount: 1,
				sampleCount: 1,
				fullScaleVolts: 1,
				results: {},
				verdict: 'none',
				checks: [],
				spectrum: {}
			})
			.run();
		expect(deleteLimitProfile(db, used.id)).toEqual({ outcome: 'archived' });
		expect(getLimitProfile(db, used.id)?.archived).toBe(true);
		expect(listLimitProfiles(db).map((x) => x.name)).toEqual([]);
		expect(listLimitProfiles(db, { includeArchived: true }).map((x) => x.name)).toEqual(['Used']);
	});

	it('seeds the demo profiles once', () => {
		expect(seedLimitProfiles(db)).toBe(SEED_LIMIT_PROFILES.length);
		expect(seedLimitProfiles(db)).toBe(0);
		const all = listLimitProfiles(db);
		expect(all).toHaveLength(SEED_LIMIT_PROFILES.length);
		// Every seeded profile survives its own validation on the way out (no silently dropped limits).
		for (const p of all) {
			const src = SEED_LIMIT_PROFILES.find((s) => s.name === p.name)!;
			expect(p.limits).toHaveLength(src.limits.length);
		}
	});
});
