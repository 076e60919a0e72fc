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

/** Invented shop profiles for the demo. Values are common bench practice, not any maker's spec. */
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
			notes: 'Tone controls flat or defeated, loudness off.'
		},
		limits: [
			{ metric: 'thdnPercent', channel: 'each', op: 'le', value: 0.05, unit: '%' },
			{ metric: 'snrDb', channel: 'each', op: 'ge', value: 80, unit: 'dB' },
			{ metric: 'balanceDb', channel: 'each', op: 'le', value: 0.5, unit: 'dB' },
			{ metric: 'frequencyHz', channel: 'each', op: 'ge', value: 990, unit: 'Hz' },
			{ metric: 'frequencyHz', channel: 'each', op: 'le', value: 1010, unit: 'Hz' }
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
			notes: 'Set the volume for about 6.3 V rms (5 W) per channel before capturing.'
		},
		limits: [
			{ metric: 'powerW', channel: 'each', op: 'ge', value: 4.5, unit: 'W' },
			{ metric: 'thdPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' },
			{ metric: 'thdnPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' },
			{ metric: 'snrDb', channel: 'each', op: 'ge', value: 75, unit: 'dB' },
			{ metric: 'balanceDb', channel: 'each', op: 'le', value: 1, unit: 'dB' }
		]
	},
	{
		name: 'Channel balance',
		description: 'Both channels driven alike, balance control centred. Common practice tolerance.',
		conditions: { generatorFrequencyHz: 1000, bandLowHz: 20, bandHighHz: 20_000, weighting: 'none' },
		limits: [{ metric: 'balanceDb', channel: 'each', op: 'le', value: 0.5, unit: 'dB' }]
	},
	{
		name: 'Crosstalk, one channel driven',
		description:
			'Drive one channel only (generator drive left or right); the other is measured at the same frequency.',
		conditions: { generatorFrequencyHz: 1000, bandLowHz: 20, bandHighHz: 20_000, weighting: 'none' },
		limits: [{ metric: 'crosstalkDb', channel: 'each', op: 'le', value: -50, unit: 'dB' }]
	},
	{
		name: 'Steadiness after control cleaning',
		description:
			'Work the volume and balance controls, stop, and capture: a clean control settles within a few seconds.',
		conditions: { generatorFrequencyHz: 1000, bandLowHz: 20, bandHighHz: 20_000, weighting: 'none' },
		limits: [
			{ metric: 'levelSpreadDb', channel: 'each', op: 'le', value: 0.2, unit: 'dB' },
			{ metric: 'thdnSpreadDb', channel: 'each', op: 'le', value: 3, unit: 'dB' }
		]
	},
	{
		name: 'Residual noise, A-weighted',
		description: 'Input shorted or generator off, volume at minimum; measures hiss and hum at the output.',
		conditions: { bandLowHz: 20, bandHighHz: 20_000, weighting: 'a', loadOhms: 8 },
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
