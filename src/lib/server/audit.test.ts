// The audit trail as the services write it: user and role changes, limit-profile changes,
// settings changes, job edits and part changes each leave one entry with who and what changed
// (never a password), written in the action's own transaction so a failed write undoes both.
import { beforeEach, describe, expect, it } from 'vitest';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import { audit, listAudit } from './audit';
import { createUser, updateUser } from './users';
import { createLimitProfile, deleteLimitProfile, updateLimitProfile } from './limit-profiles';
import { updateSettings } from './settings';
import { addPart, createJob, deletePart, updateJob } from './jobs';
import { partSchema } from '../schemas/jobs';

let db: Db;
beforeEach(() => {
	db = openDb(':memory:');
	db.insert(table.users)
		.values({ id: 'boss', email: 'boss@example.com', name: 'Ada Quennell', role: 'admin', passwordHash: 'x' })
		.run();
});

const entries = (action?: string) =>
	listAudit(db, action ? { action: action as never } : {}).items.map((e) => ({
		actorId: e.actorId,
		action: e.action,
		subject: e.subject,
		detail: e.detail
	}));

describe('audit entries from the services', () => {
	it('users: creation, rename, role change, deactivation and a password reset, never the password', async () => {
		const u = await createUser(
			db,
			{
				email: 'new.tech@example.com',
				name: 'Perrin Vale',
				role: 'technician',
				password: 'walnut ferry compass lantern'
			},
			'boss'
		);
		await updateUser(db, u.id, { name: 'Perrin Vale-Ashby', role: 'supervisor' }, 'boss');
		await updateUser(db, u.id, { active: false }, 'boss');
		await updateUser(db, u.id, { password: 'another quiet harbour lamp' }, 'boss');
		expect(entries('user.').map((e) => e.action)).toEqual([
			'user.password-reset',
			'user.deactivated',
			'user.role-changed',
			'user.updated',
			'user.created'
		]);
		expect(entries('user.role-changed')[0]).toEqual({
			actorId: 'boss',
			action: 'user.role-changed',
			subject: 'user Perrin Vale-Ashby',
			detail: { userId: u.id, role: { from: 'technician', to: 'supervisor' } }
		});
		expect(JSON.stringify(entries())).not.toMatch(/walnut|harbour/);
	});

	it('limit profiles: created, changed (only what changed), deleted', () => {
		const p = createLimitProfile(
			db,
			{
				name: 'Audit profile',
				conditions: { generatorFrequencyHz: 1000 },
				limits: [{ metric: 'thdnPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' }]
			},
			'boss'
		);
		updateLimitProfile(db, p.id, { description: 'For the trail' }, 'boss');
		deleteLimitProfile(db, p.id, 'boss');
		expect(entries('limit-profile.').map((e) => [e.action, e.subject])).toEqual([
			['limit-profile.deleted', 'limit profile “Audit profile”'],
			['limit-profile.updated', 'limit profile “Audit profile”'],
			['limit-profile.created', 'limit profile “Audit profile”']
		]);
		expect(entries('limit-profile.updated')[0].detail).toEqual({
			profileId: p.id,
			description: { from: null, to: 'For the trail' }
		});
	});

	it('settings: only changed keys, and nothing when nothing changed', () => {
		updateSettings(db, { mainsHz: 60 }, 'boss');
		updateSettings(db, { mainsHz: 60 }, 'boss');
		expect(entries('settings.changed')).toEqual([
			{
				actorId: 'boss',
				action: 'settings.changed',
				subject: 'shop settings',
				detail: { mainsHz: { from: 50, to: 60 } }
			}
		]);
	});

	it('jobs and parts: edits name the fields; a removed part keeps its facts', () => {
		const job = createJob(
			db,
			{
				customerName: 'Wren Castellow',
				category: 'tuner',
				make: 'Orlund',
				model: 'OT-9',
				complaint: 'Drifts'
			},
			'boss'
		);
		updateJob(db, job.id, { model: 'OT-9B' }, 'boss');
		const part = addPart(db, job.id, partSchema.parse({ refDes: 'VR3', description: 'AFC trimmer' }), 'boss');
		deletePart(db, job.id, part.id, 'boss');
		const trail = listAudit(db, { job: job.id }).items;
		expect(trail.map((e) => e.action)).toEqual(['part.removed', 'part.added', 'job.updated', 'job.created']);
		expect(trail[2].detail).toEqual({ model: { from: 'OT-9', to: 'OT-9B' } });
		expect(trail[0].detail).toMatchObject({ refDes: 'VR3', description: 'AFC trimmer' });
	});

	it('is written in the action’s transaction: when the entry cannot be written, the action is undone', () => {
		const job = createJob(
			db,
			{
				customerName: 'Wren Castellow',
				category: 'tuner',
				make: 'Orlund',
				model: 'OT-9',
				complaint: 'Drifts'
			},
			'boss'
		);
		db.$client.exec(
			"CREATE TRIGGER no_audit BEFORE INSERT ON audit_log BEGIN SELECT RAISE(ABORT, 'audit refused'); END"
		);
		expect(() => updateJob(db, job.id, { model: 'Changed' }, 'boss')).toThrow();
		db.$client.exec('DROP TRIGGER no_audit');
		expect(db.select().from(table.jobs).get()!.model).toBe('OT-9');
		// And an entry outside any action is still just one row.
		db.transaction((tx) =>
			audit(tx, { actorId: null, action: 'settings.changed', subject: 'shop settings' })
		);
		expect(listAudit(db, { action: 'settings.changed' }).items[0]).toMatchObject({
			actorId: null,
			actorName: null
		});
	});
});
