// Limit profiles in the database: list, read, create, update, and delete-or-archive (a profile
// that snapshots refer to is archived, never deleted), plus the demo shop's seed profiles.
import { asc, eq, sql } from 'drizzle-orm';
import type { Db } from './db/open';
import * as table from './db/schema';
import {
	conditionsSchema,
	limitSchema,
	profileInputSchema,
	type LimitProfileView,
	type ProfileInput,
	type ProfileInputRaw,
	type ProfilePatch
} from '../limit-profiles';
import { z } from 'zod';
import { DomainError } from './errors';
import { audit, changes } from './audit';

type Row = typeof table.limitProfiles.$inferSelect;

/** Rows are validated on the way out too: a hand-edited row must not break the bench. */
function view(row: Row): LimitProfileView {
	const conditions = conditionsSchema.safeParse(row.conditions);
	const limits = z.array(limitSchema).safeParse(row.limits);
	return {
		id: row.id,
		name: row.name,
		description: row.description,
		conditions: conditions.success ? conditions.data : conditionsSchema.parse({}),
		limits: limits.success ? limits.data : [],
		archived: row.archived
	};
}

export function listLimitProfiles(db: Db, options: { includeArchived?: boolean } = {}): LimitProfileView[] {
	const q = db.select().from(table.limitProfiles);
	const rows = options.includeArchived
		? q.orderBy(asc(table.limitProfiles.name)).all()
		: q.where(eq(table.limitProfiles.archived, false)).orderBy(asc(table.limitProfiles.name)).all();
	return rows.map(view);
}

export function getLimitProfile(db: Db, id: number): LimitProfileView | null {
	const row = db.select().from(table.limitProfiles).where(eq(table.limitProfiles.id, id)).get();
	return row ? view(row) : null;
}

function nameTaken(db: Pick<Db, 'select'>, name: string, exceptId?: number): boolean {
	const row = db
		.select({ id: table.limitProfiles.id })
		.from(table.limitProfiles)
		.where(sql`lower(${table.limitProfiles.name}) = lower(${name})`)
		.get();
	return !!row && row.id !== exceptId;
}

export function createLimitProfile(db: Db, input: ProfileInputRaw, userId: string | null): LimitProfileView {
	const data = profileInputSchema.parse(input);
	if (nameTaken(db, data.name))
		throw new DomainError('conflict', `A profile named “${data.name}” already exists`);
	return db.transaction((tx) => {
		const row = tx
			.insert(table.limitProfiles)
			.values({
				name: data.name,
				description: data.description ?? null,
				conditions: data.conditions,
				limits: data.limits,
				createdBy: userId
			})
			.returning()
			.get();
		audit(tx, {
			actorId: userId,
			action: 'limit-profile.created',
			subject: `limit profile “${row.name}”`,
			detail: { profileId: row.id, conditions: row.conditions, limits: row.limits }
		});
		return view(row);
	});
}

export function updateLimitProfile(
	db: Db,
	id: number,
	patch: ProfilePatch,
	actorId: string | null = null
): LimitProfileView {
	return db.transaction((tx) => {
		const existing = tx.select().from(table.limitProfiles).where(eq(table.limitProfiles.id, id)).get();
		if (!existing) throw new DomainError('not-found', 'No such limit profile');
		if (patch.name !== undefined && nameTaken(tx, patch.name, id)) {
			throw new DomainError('conflict', `A profile named “${patch.name}” already exists`);
		}
		const row = tx
			.update(table.limitProfiles)
			.set({
				...(patch.name !== undefined ? { name: patch.name } : {}),
				...(patch.description !== undefined ? { description: patch.description ?? null } : {}),
				...(patch.conditions !== undefined ? { conditions: patch.conditions } : {}),
				...(patch.limits !== undefined ? { limits: patch.limits } : {}),
				...(patch.archived !== undefined ? { archived: patch.archived } : {}),
				updatedAt: new Date()
			})
			.where(eq(table.limitProfiles.id, id))
			.returning()
			.get();
		const changed = changes(existing, {
			name: row.name,
			description: row.description,
			conditions: row.conditions,
			limits: row.limits,
			archived: row.archived
		});
		if (Object.keys(changed).length)
			audit(tx, {
				actorId,
				action: 'limit-profile.updated',
				subject: `limit profile “${row.name}”`,
				detail: { profileId: id, ...changed }
			});
		return view(row);
	});
}

/**
 * Delete a profile nobody has used; archive one that snapshots refer to (they keep their own
 * copy of the profile, but the foreign key and the audit trail need the row).
 */
export function deleteLimitProfile(
	db: Db,
	id: number,
	actorId: string | null = null
): { outcome: 'deleted' | 'archived' } {
	return db.transaction((tx) => {
		const existing = tx.select().from(table.limitProfiles).where(eq(table.limitProfiles.id, id)).get();
		if (!existing) throw new DomainError('not-found', 'No such limit profile');
		const used = tx
			.select({ id: table.snapshots.id })
			.from(table.snapshots)
			.where(eq(table.snapshots.profileId, id))
			.limit(1)
			.get();
		if (used) {
			tx.update(table.limitProfiles)
				.set({ archived: true, updatedAt: new Date() })
				.where(eq(table.limitProfiles.id, id))
				.run();
			audit(tx, {
				actorId,
				action: 'limit-profile.archived',
				subject: `limit profile “${existing.name}”`,
				detail: { profileId: id, reason: 'snapshots refer to it' }
			});
			return { outcome: 'archived' as const };
		}
		tx.delete(table.limitProfiles).where(eq(table.limitProfiles.id, id)).run();
		audit(tx, {
			actorId,
			action: 'limit-profile.deleted',
			subject: `limit profile “${existing.name}”`,
			detail: { profileId: id, conditions: existing.conditions, limits: existing.limits }
		});
		return { outcome: 'deleted' as const };
	});
}

/** Balance is checked where volume pots track worst: three positions re maximum (common practice). */
const BALANCE_POINTS = [
	{ attenuationDb: 20, limitDb: 1 },
	{ attenuationDb: 40, limitDb: 1.5 },
	{ attenuationDb: 60, limitDb: 3 }
] as const;

/** Crosstalk rises with frequency (stray capacitance), so it is checked low, mid and high (common practice). */
const CROSSTALK_POINTS = [
	{ frequencyHz: 100, label: '100 Hz', limitDb: -50 },
	{ frequencyHz: 1000, label: '1 kHz', limitDb: -50 },
	{ frequencyHz: 10_000, label: '10 kHz', limitDb: -40 }
] as const;

/**
 * Invented shop profiles for the demo. Values are common bench practice, not any maker's spec.
 * They judge the unit, never the bench: the generator's frequency and the drive level are set-up
 * conditions the technician establishes (shown above Capture), not pass/fail limits.
 */
export const SEED_LIMIT_PROFILES: ProfileInput[] = [
	{
		name: 'Line preamp output, 1 kHz',
		description:
			'Preamplifier or tape/tuner line output driven at 1 kHz, volume set for about 0.5 V out. Common practice for a healthy solid-state line stage.',
		conditions: {
			generatorFrequencyHz: 1000,
			generatorLevelVrms: 0.5,
			loadOhms: 10_000,
			bandLowHz: 20,
			bandHighHz: 20_000,
			weighting: 'none',
			notes: 'Tone controls flat or defeated, loudness off.',
			setup:
				'Generator 1 kHz into a line input, both channels driven. Tone controls flat or defeated, loudness off, balance centred. Volume set for about 0.5 V rms at the output, into a 10 kΩ load.'
		},
		limits: [
			{ metric: 'thdnPercent', channel: 'each', op: 'le', value: 0.05, unit: '%' },
			{ metric: 'snrDb', channel: 'each', op: 'ge', value: 80, unit: 'dB' },
			{ metric: 'balanceDb', channel: 'each', op: 'le', value: 0.5, unit: 'dB' }
		]
	},
	{
		name: 'Power amp, 1 kHz, 5 W into 8 Ω',
		description:
			'Integrated or power amplifier at a few watts into a resistive 8 Ω dummy load rated well above the drive. Common practice for a checkout after recapping and bias setting.',
		conditions: {
			generatorFrequencyHz: 1000,
			generatorLevelVrms: 0.32,
			loadOhms: 8,
			bandLowHz: 20,
			bandHighHz: 20_000,
			weighting: 'none',
			setup:
				'Both channels into resistive 8 Ω dummy loads rated well above 5 W. Raise the volume until each channel reads about 6.3 V rms (about 5 W, P = V²/R), then capture. The drive level is a set-up condition, not a pass mark. Keep an attenuator between the amplifier output and the interface input.'
		},
		limits: [
			{ metric: 'thdPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' },
			{ metric: 'thdnPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' },
			{ metric: 'snrDb', channel: 'each', op: 'ge', value: 75, unit: 'dB' },
			{ metric: 'balanceDb', channel: 'each', op: 'le', value: 1, unit: 'dB' }
		]
	},
	...BALANCE_POINTS.map((b): ProfileInput => ({
		name: `Channel balance, volume −${b.attenuationDb} dB`,
		description: `Balance with the volume about ${b.attenuationDb} dB below maximum; one of three positions (−20, −40, −60 dB), since a worn volume pot tracks worst near the bottom. Tolerance is common practice.`,
		conditions: {
			generatorFrequencyHz: 1000,
			bandLowHz: 20,
			bandHighHz: 20_000,
			weighting: 'none',
			setup: `Both channels driven alike at 1 kHz, balance centred, tone controls flat. Keep the generator low enough that the unit stays well below rated output at full volume. Note the output level with the volume at maximum, then turn the volume down until the output is about ${b.attenuationDb} dB lower, and capture.`
		},
		limits: [{ metric: 'balanceDb', channel: 'each', op: 'le', value: b.limitDb, unit: 'dB' }]
	})),
	...CROSSTALK_POINTS.map((c): ProfileInput => ({
		name: `Crosstalk at ${c.label}, one channel driven`,
		description: `Crosstalk at ${c.label}; one of three frequencies (100 Hz, 1 kHz, 10 kHz). Tolerance is common practice.`,
		conditions: {
			generatorFrequencyHz: c.frequencyHz,
			bandLowHz: 20,
			bandHighHz: 20_000,
			weighting: 'none',
			setup: `Drive one channel only (generator drive left or right) at ${c.label}. Terminate the undriven input with a shorting plug or a resistor near the source impedance: an open input picks up more than the unit leaks and reads worse than it is. Capture once with each channel driven.`
		},
		limits: [{ metric: 'crosstalkDb', channel: 'each', op: 'le', value: c.limitDb, unit: 'dB' }]
	})),
	{
		name: 'Steadiness after control cleaning',
		description:
			'Work the volume and balance controls, stop, and capture: a clean control settles within a few seconds.',
		conditions: {
			generatorFrequencyHz: 1000,
			bandLowHz: 20,
			bandHighHz: 20_000,
			weighting: 'none',
			setup:
				'Generator on at 1 kHz. Work the volume, balance and selector through their travel a few times, leave them at a normal listening position, hands off, and capture after a few seconds.'
		},
		limits: [
			{ metric: 'levelSpreadDb', channel: 'each', op: 'le', value: 0.2, unit: 'dB' },
			{ metric: 'thdnSpreadDb', channel: 'each', op: 'le', value: 3, unit: 'dB' }
		]
	},
	{
		name: 'Residual noise, A-weighted',
		description: 'Input shorted or generator off, volume at minimum; measures hiss and hum at the output.',
		conditions: {
			bandLowHz: 20,
			bandHighHz: 20_000,
			weighting: 'a',
			loadOhms: 8,
			stimulus: 'none',
			setup: 'Generator off, the input shorted or terminated, volume at minimum, outputs into the 8 Ω loads.'
		},
		limits: [{ metric: 'noiseVrms', channel: 'each', op: 'le', value: 500, unit: 'µV' }]
	}
];

/** Insert the demo profiles that are not there yet (by name); returns how many were added. */
export function seedLimitProfiles(db: Db, createdBy: string | null = null): number {
	let added = 0;
	for (const p of SEED_LIMIT_PROFILES) {
		if (nameTaken(db, p.name)) continue;
		createLimitProfile(db, p, createdBy);
		added++;
	}
	return added;
}
