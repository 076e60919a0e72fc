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

	it('seeds profiles that judge the unit, with the bench set-up stated before capture', () => {
		seedLimitProfiles(db);
		const all = listLimitProfiles(db);
		for (const p of all) {
			// The generator's frequency is the bench's, and a drive level is set, not measured.
			expect(
				p.limits.map((l) => l.metric),
				p.name
			).not.toContain('frequencyHz');
			expect(
				p.limits.map((l) => l.metric),
				p.name
			).not.toContain('powerW');
			// Every profile tells the technician how to set up, and keeps it through validation.
			expect(p.conditions.setup, p.name).toMatch(/\S/);
		}
		const power = all.find((p) => p.name.startsWith('Power amp'))!;
		expect(power.conditions.setup).toMatch(/6\.3 V rms \(about 5 W/);
		// Balance at three volume positions re maximum (common practice: −20, −40, −60 dB).
		const balance = all.filter((p) => p.limits.every((l) => l.metric === 'balanceDb'));
		expect(balance.map((p) => p.name)).toEqual([
			'Channel balance, volume −20 dB',
			'Channel balance, volume −40 dB',
			'Channel balance, volume −60 dB'
		]);
		// Crosstalk at 100 Hz, 1 kHz and 10 kHz with the undriven input terminated.
		const crosstalk = all.filter((p) => p.limits.every((l) => l.metric === 'crosstalkDb'));
		expect(crosstalk.map((p) => p.conditions.generatorFrequencyHz).sort((a, b) => a! - b!)).toEqual([
			100, 1000, 10_000
		]);
		for (const p of crosstalk) expect(p.conditions.setup).toMatch(/Terminate the undriven input/);
	});

	it('refuses a set-up text longer than 1000 characters and keeps one that fits', () => {
		const long = { ...input, name: 'Long', conditions: { ...input.conditions, setup: 'x'.repeat(1001) } };
		expect(() => createLimitProfile(db, long, 'u1')).toThrow();
		const ok = createLimitProfile(
			db,
			{ ...input, name: 'Fits', conditions: { ...input.conditions, setup: ' Volume at −20 dB. ' } },
			'u1'
		);
		expect(getLimitProfile(db, ok.id)?.conditions.setup).toBe('Volume at −20 dB.');
	});
});
