// User management against an in-memory database: create (validation, duplicate e-mail,
// password strength), list without hashes, role changes and deactivation ending sessions,
// the last-admin rule.
import { beforeEach, describe, expect, it } from 'vitest';
import { isDomainError } from './errors';
import { openDb, type Db } from './db/open';
import { createUser, getUser, isUserId, listAssignableUsers, listUsers, updateUser } from './users';
import { signIn, validateSessionToken } from './auth';
import { updateSettings } from './settings';

async function statusOf(fn: () => Promise<unknown>): Promise<number | 'ok'> {
	try {
		await fn();
		return 'ok';
	} catch (e) {
		if (isDomainError(e)) return e.status;
		throw e;
	}
}

const PASSWORD = 'twelve chars ok';
let db: Db;
beforeEach(() => {
	db = openDb(':memory:');
});

describe('users', () => {
	it('creates an account with a normalised e-mail and no hash in the answer', async () => {
		const u = await createUser(db, {
			email: '  Ola.Venn@Example.COM ',
			name: ' Ola Venn ',
			role: 'technician',
			password: PASSWORD
		});
		expect(u).toMatchObject({
			email: 'ola.venn@example.com',
			name: 'Ola Venn',
			role: 'technician',
			active: true
		});
		expect(isUserId(u.id)).toBe(true);
		expect(Object.keys(u)).not.toContain('passwordHash');
		expect(Object.keys(listUsers(db)[0])).not.toContain('passwordHash');
		expect((await signIn(db, { email: 'ola.venn@example.com', password: PASSWORD, ip: '10.9.0.1' })).ok).toBe(
			true
		);
	});

	it('refuses a second account for the same e-mail (409)', async () => {
		await createUser(db, { email: 'a@example.com', name: 'A', role: 'admin', password: PASSWORD });
		expect(
			await statusOf(() =>
				createUser(db, { email: 'A@example.com', name: 'B', role: 'technician', password: PASSWORD })
			)
		).toBe(409);
		expect(listUsers(db)).toHaveLength(1);
	});

	it('validates e-mail, name, role and password length (400)', async () => {
		const base = { email: 'b@example.com', name: 'B', role: 'technician' as const, password: PASSWORD };
		expect(await statusOf(() => createUser(db, { ...base, email: 'not-an-email' }))).toBe(400);
		expect(await statusOf(() => createUser(db, { ...base, name: '  ' }))).toBe(400);
		expect(await statusOf(() => createUser(db, { ...base, name: '<script>' }))).toBe(400);
		expect(await statusOf(() => createUser(db, { ...base, role: 'owner' as never }))).toBe(400);
		expect(await statusOf(() => createUser(db, { ...base, password: 'short pass' }))).toBe(400);
		expect(await statusOf(() => createUser(db, { ...base, password: 'x'.repeat(129) }))).toBe(400);
		expect(listUsers(db)).toHaveLength(0);
	});

	it('changes role and name; unknown id is 404', async () => {
		await createUser(db, { email: 'adm@example.com', name: 'Adm', role: 'admin', password: PASSWORD });
		const t = await createUser(db, {
			email: 't@example.com',
			name: 'T',
			role: 'technician',
			password: PASSWORD
		});
		expect(await updateUser(db, t.id, { role: 'supervisor', name: 'Tee' })).toMatchObject({
			role: 'supervisor',
			name: 'Tee'
		});
		expect(getUser(db, t.id)?.role).toBe('supervisor');
		expect(await statusOf(() => updateUser(db, 'nosuchuser', { name: 'X' }))).toBe(404);
		expect(await statusOf(() => updateUser(db, t.id, {}))).toBe(400);
	});

	it('never demotes or deactivates the last active admin (409)', async () => {
		const a = await createUser(db, { email: 'a@example.com', name: 'A', role: 'admin', password: PASSWORD });
		expect(await statusOf(() => updateUser(db, a.id, { role: 'technician' }))).toBe(409);
		expect(await statusOf(() => updateUser(db, a.id, { active: false }))).toBe(409);
		const b = await createUser(db, { email: 'b@example.com', name: 'B', role: 'admin', password: PASSWORD });
		expect(await updateUser(db, a.id, { active: false })).toMatchObject({ active: false });
		expect(await statusOf(() => updateUser(db, b.id, { role: 'supervisor' }))).toBe(409);
	});

	it('lists only active accounts as assignees, by name', async () => {
		await createUser(db, { email: 'z@example.com', name: 'Zed', role: 'admin', password: PASSWORD });
		const t = await createUser(db, {
			email: 't@example.com',
			name: 'Ann',
			role: 'technician',
			password: PASSWORD
		});
		await createUser(db, { email: 's@example.com', name: 'Mo', role: 'supervisor', password: PASSWORD });
		await updateUser(db, t.id, { active: false });
		expect(listAssignableUsers(db).map((u) => u.name)).toEqual(['Mo', 'Zed']);
	});

	it('ends the user’s sessions when their role changes, not when nothing changes', async () => {
		await createUser(db, { email: 'adm@example.com', name: 'Adm', role: 'admin', password: PASSWORD });
		const t = await createUser(db, {
			email: 't@example.com',
			name: 'T',
			role: 'technician',
			password: PASSWORD
		});
		const signInT = async () => {
			const r = await signIn(db, { email: 't@example.com', password: PASSWORD, ip: '10.9.0.2' });
			if (!r.ok) throw new Error('sign-in failed');
			return r.token;
		};
		const same = await signInT();
		await updateUser(db, t.id, { role: 'technician', name: 'Tee' });
		expect(await validateSessionToken(db, same)).not.toBeNull();
		const before = await signInT();
		await updateUser(db, t.id, { role: 'supervisor' });
		expect(await validateSessionToken(db, before)).toBeNull();
		expect(await validateSessionToken(db, same)).toBeNull();
	});

	it('refuses a weak password on create and on an admin reset, naming the field and why (400)', async () => {
		updateSettings(db, { shopName: 'Quiet Valve Audio Works' });
		const weak = async (fn: () => Promise<unknown>) => {
			try {
				await fn();
			} catch (e) {
				if (isDomainError(e) && e.status === 400) return e.issues ?? [];
				throw e;
			}
			throw new Error('expected a 400');
		};
		const base = { email: 'ola.venn@example.com', name: 'Ola Venn', role: 'technician' as const };
		const common = await weak(() => createUser(db, { ...base, password: 'password1234' }));
		expect(common).toEqual([
			{
				path: 'password',
				message: expect.stringMatching(
					/^Too easy to guess: it is too close to a commonly used password\. Use at least 12 characters/
				)
			}
		]);
		const own = await weak(() => createUser(db, { ...base, password: 'olavenn12345' }));
		expect(own[0].message).toMatch(/your name, your e-mail address or the shop’s name/);
		const shop = await weak(() => createUser(db, { ...base, password: 'quietvalve2026' }));
		expect(shop[0].message).toMatch(/the shop’s name/);
		expect(listUsers(db)).toHaveLength(0);

		const u = await createUser(db, { ...base, password: PASSWORD });
		const reset = await weak(() => updateUser(db, u.id, { password: 'qwerty123456' }));
		expect(reset[0].path).toBe('password');
		expect((await signIn(db, { email: base.email, password: PASSWORD, ip: '10.9.0.3' })).ok).toBe(true);
	});

	it('recognises user ids', () => {
		expect(isUserId('demotech1')).toBe(true);
		expect(isUserId('abc2def3ghi4jkl5')).toBe(true);
		expect(isUserId('../etc')).toBe(false);
		expect(isUserId('')).toBe(false);
		expect(isUserId(undefined)).toBe(false);
	});
});
