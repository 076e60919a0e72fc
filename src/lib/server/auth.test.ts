// Sessions and passwords against an in-memory database with the real migrations: fresh
// session at sign-in, sign-out, idle and absolute expiry, password change and deactivation
// ending sessions, rate limits, argon2id parameters, cookie attributes.
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { createHash } from 'node:crypto';
import type { Cookies } from '@sveltejs/kit';
import { eq } from 'drizzle-orm';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import {
	SESSION_COOKIE,
	SIGN_IN_LIMITS,
	changePassword,
	cookieSecureFor,
	deleteSessionCookie,
	hashPassword,
	purgeExpiredSessions,
	sessionIdFromToken,
	setSessionCookie,
	signIn,
	signOut,
	validateSessionToken,
	verifyPassword
} from './auth';
import { env } from './env';
import { createUser, updateUser } from './users';

const PASSWORD = 'correct horse battery';
const MINUTE_MS = 60_000;

async function freshDb(): Promise<{ db: Db; userId: string }> {
	const db = openDb(':memory:');
	// Two admins so deactivating one is allowed by the last-admin rule.
	await createUser(db, {
		email: 'other.admin@example.com',
		name: 'Other Admin',
		role: 'admin',
		password: PASSWORD
	});
	const user = await createUser(db, {
		email: 'pat@example.com',
		name: 'Pat Benchley',
		role: 'technician',
		password: PASSWORD
	});
	return { db, userId: user.id };
}

async function signInOk(db: Db, ip = '10.0.0.1') {
	const result = await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip });
	if (!result.ok) throw new Error(`sign-in failed: ${result.reason}`);
	return result;
}

describe('passwords', () => {
	it('hashes with argon2id at the OWASP parameters (19 MiB, t=2, p=1)', async () => {
		const h = await hashPassword('a long passphrase');
		// OWASP Password Storage Cheat Sheet: argon2id, m=19456 KiB, t=2, p=1
		expect(h).toMatch(/^\$argon2id\$v=19\$m=19456,t=2,p=1\$/);
		expect(await verifyPassword(h, 'a long passphrase')).toBe(true);
		expect(await verifyPassword(h, 'a long passphrasE')).toBe(false);
	});

	it('treats a malformed stored hash as a wrong password, not a crash', async () => {
		expect(await verifyPassword('not-a-hash', 'anything')).toBe(false);
	});

	it('salts: the same password hashes differently twice', async () => {
		expect(await hashPassword('same one')).not.toBe(await hashPassword('same one'));
	});
});

describe('sign-in and sessions', () => {
	let db: Db;
	let userId: string;

	beforeEach(async () => {
		({ db, userId } = await freshDb());
	});
	afterEach(() => {
		vi.useRealTimers();
	});

	it('stores only the SHA-256 of the cookie token', async () => {
		const r = await signInOk(db);
		expect(r.token).toMatch(/^[a-z2-7]{32}$/);
		const rows = db.select().from(table.sessions).all();
		expect(rows).toHaveLength(1);
		expect(rows[0].id).toBe(createHash('sha256').update(r.token).digest('hex'));
		expect(rows.some((s) => s.id === r.token)).toBe(false);
		expect(rows[0].userId).toBe(userId);
		const v = await validateSessionToken(db, r.token);
		expect(v?.user).toEqual({
			id: userId,
			email: 'pat@example.com',
			name: 'Pat Benchley',
			role: 'technician'
		});
	});

	it('starts a fresh session at every sign-in', async () => {
		const a = await signInOk(db);
		const b = await signInOk(db);
		expect(a.token).not.toBe(b.token);
		expect(a.session.id).not.toBe(b.session.id);
		expect(db.select().from(table.sessions).all()).toHaveLength(2);
	});

	it('accepts the e-mail in any case and with spaces', async () => {
		const r = await signIn(db, { email: '  PAT@Example.com ', password: PASSWORD, ip: '10.0.0.2' });
		expect(r.ok).toBe(true);
	});

	it('answers the same way for an unknown e-mail, a wrong password and a deactivated account', async () => {
		const unknown = await signIn(db, { email: 'nobody@example.com', password: PASSWORD, ip: '10.0.0.3' });
		const wrong = await signIn(db, { email: 'pat@example.com', password: 'wrong password!', ip: '10.0.0.3' });
		await updateUser(db, userId, { active: false });
		const inactive = await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '10.0.0.4' });
		expect(unknown).toEqual({ ok: false, reason: 'invalid' });
		expect(wrong).toEqual({ ok: false, reason: 'invalid' });
		expect(inactive).toEqual({ ok: false, reason: 'invalid' });
		expect(db.select().from(table.sessions).all()).toHaveLength(0);
	});

	it('rejects tokens of the wrong shape and unknown tokens', async () => {
		expect(await validateSessionToken(db, '')).toBeNull();
		expect(await validateSessionToken(db, 'x'.repeat(500))).toBeNull();
		expect(await validateSessionToken(db, 'a'.repeat(32))).toBeNull();
	});

	it('sign-out ends the session on the server', async () => {
		const r = await signInOk(db);
		await signOut(db, r.session.id);
		expect(await validateSessionToken(db, r.token)).toBeNull();
		expect(db.select().from(table.sessions).all()).toHaveLength(0);
	});

	it('idles out after SESSION_IDLE_MINUTES without use', async () => {
		vi.useFakeTimers({ toFake: ['Date'] });
		vi.setSystemTime(new Date('2026-03-02T08:00:00Z'));
		const r = await signInOk(db);
		expect(r.expiresAt.getTime() - Date.now()).toBe(env.SESSION_IDLE_MINUTES * MINUTE_MS);
		vi.setSystemTime(Date.now() + (env.SESSION_IDLE_MINUTES + 1) * MINUTE_MS);
		expect(await validateSessionToken(db, r.token)).toBeNull();
		// The expired row is gone, not just ignored.
		expect(db.select().from(table.sessions).where(eq(table.sessions.id, r.session.id)).all()).toHaveLength(0);
	});

	it('slides the idle expiry while the session is in use', async () => {
		vi.useFakeTimers({ toFake: ['Date'] });
		vi.setSystemTime(new Date('2026-03-02T08:00:00Z'));
		const r = await signInOk(db);
		const step = Math.round(env.SESSION_IDLE_MINUTES * 0.6) * MINUTE_MS;
		vi.setSystemTime(Date.now() + step);
		const first = await validateSessionToken(db, r.token);
		expect(first?.fresh).toBe(true);
		expect(first!.session.expiresAt.getTime()).toBe(Date.now() + env.SESSION_IDLE_MINUTES * MINUTE_MS);
		// 1.2 × the idle time after sign-in, but only 0.6 × since the last use: still valid.
		vi.setSystemTime(Date.now() + step);
		expect(await validateSessionToken(db, r.token)).not.toBeNull();
	});

	it('ends at the absolute lifetime however actively it is used', async () => {
		vi.useFakeTimers({ toFake: ['Date'] });
		const start = new Date('2026-03-02T08:00:00Z').getTime();
		vi.setSystemTime(start);
		const r = await signInOk(db);
		const absoluteMs = env.SESSION_ABSOLUTE_HOURS * 3600_000;
		const step = Math.round(env.SESSION_IDLE_MINUTES * 0.6) * MINUTE_MS;
		let now = start;
		while (now + step < start + absoluteMs) {
			now += step;
			vi.setSystemTime(now);
			const v = await validateSessionToken(db, r.token);
			expect(v).not.toBeNull();
			// The cookie never outlives the absolute limit.
			expect(v!.session.expiresAt.getTime()).toBeLessThanOrEqual(start + absoluteMs);
		}
		vi.setSystemTime(start + absoluteMs);
		expect(await validateSessionToken(db, r.token)).toBeNull();
		expect(db.select().from(table.sessions).all()).toHaveLength(0);
	});

	it('housekeeping drops idle-expired and over-age sessions only', async () => {
		vi.useFakeTimers({ toFake: ['Date'] });
		vi.setSystemTime(new Date('2026-03-02T08:00:00Z'));
		await signInOk(db);
		vi.setSystemTime(Date.now() + (env.SESSION_IDLE_MINUTES + 1) * MINUTE_MS);
		const live = await signInOk(db);
		expect(purgeExpiredSessions(db)).toBe(1);
		expect(
			db
				.select()
				.from(table.sessions)
				.all()
				.map((s) => s.id)
		).toEqual([live.session.id]);
	});

	it('a password change ends every other session and keeps the current one', async () => {
		const here = await signInOk(db);
		const elsewhere = await signInOk(db, '10.0.0.9');
		const result = await changePassword(db, userId, PASSWORD, 'a brand new passphrase', here.session.id);
		expect(result).toEqual({ ok: true });
		expect(await validateSessionToken(db, here.token)).not.toBeNull();
		expect(await validateSessionToken(db, elsewhere.token)).toBeNull();
		expect((await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '10.0.0.5' })).ok).toBe(
			false
		);
		expect(
			(await signIn(db, { email: 'pat@example.com', password: 'a brand new passphrase', ip: '10.0.0.5' })).ok
		).toBe(true);
	});

	it('a wrong current password changes nothing', async () => {
		const here = await signInOk(db);
		const elsewhere = await signInOk(db);
		expect(
			await changePassword(db, userId, 'not my password', 'a brand new passphrase', here.session.id)
		).toEqual({
			ok: false,
			reason: 'wrong-password'
		});
		expect(await validateSessionToken(db, elsewhere.token)).not.toBeNull();
		expect((await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '10.0.0.6' })).ok).toBe(
			true
		);
	});

	it('deactivation ends all the user’s sessions; reactivation allows sign-in again', async () => {
		const a = await signInOk(db);
		const b = await signInOk(db);
		await updateUser(db, userId, { active: false });
		expect(await validateSessionToken(db, a.token)).toBeNull();
		expect(await validateSessionToken(db, b.token)).toBeNull();
		expect(db.select().from(table.sessions).all()).toHaveLength(0);
		await updateUser(db, userId, { active: true });
		expect((await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '10.0.0.7' })).ok).toBe(
			true
		);
	});

	it('an admin password reset ends all the user’s sessions', async () => {
		const a = await signInOk(db);
		await updateUser(db, userId, { password: 'reset by the admin' });
		expect(await validateSessionToken(db, a.token)).toBeNull();
	});

	it('a session of a user deactivated behind the service’s back is refused and removed', async () => {
		const a = await signInOk(db);
		db.update(table.users).set({ active: false }).where(eq(table.users.id, userId)).run();
		expect(await validateSessionToken(db, a.token)).toBeNull();
		expect(db.select().from(table.sessions).all()).toHaveLength(0);
	});
});

describe('sign-in rate limits', () => {
	it(`pauses an account after ${SIGN_IN_LIMITS.perAccount.points} failures, even with the right password`, async () => {
		const { db } = await freshDb();
		for (let i = 0; i < SIGN_IN_LIMITS.perAccount.points; i++) {
			// Different addresses: only the per-account limit is in play.
			const r = await signIn(db, { email: 'pat@example.com', password: `wrong ${i}`, ip: `10.1.0.${i}` });
			expect(r).toEqual({ ok: false, reason: 'invalid' });
		}
		const blocked = await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '10.1.1.1' });
		expect(blocked.ok).toBe(false);
		if (blocked.ok) return;
		expect(blocked.reason).toBe('rate-limited');
		expect(blocked.retryAfterS).toBeGreaterThan(0);
		expect(blocked.retryAfterS).toBeLessThanOrEqual(SIGN_IN_LIMITS.perAccount.durationS);
		// Another account is unaffected.
		const other = await signIn(db, { email: 'other.admin@example.com', password: PASSWORD, ip: '10.1.1.1' });
		expect(other.ok).toBe(true);
	});

	it('a successful sign-in clears the account’s failure count', async () => {
		const { db } = await freshDb();
		const fail = (i: number) =>
			signIn(db, { email: 'pat@example.com', password: `wrong ${i}`, ip: `10.2.0.${i}` });
		for (let i = 0; i < SIGN_IN_LIMITS.perAccount.points - 1; i++) await fail(i);
		expect((await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '10.2.1.1' })).ok).toBe(
			true
		);
		for (let i = 0; i < SIGN_IN_LIMITS.perAccount.points - 1; i++) await fail(i);
		expect((await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '10.2.1.1' })).ok).toBe(
			true
		);
	});

	it(`pauses an address after ${SIGN_IN_LIMITS.perAddress.points} failures across accounts`, async () => {
		const { db } = await freshDb();
		for (let i = 0; i < SIGN_IN_LIMITS.perAddress.points; i++) {
			await signIn(db, { email: `guess${i}@example.com`, password: 'guess', ip: '192.0.2.50' });
		}
		const r = await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '192.0.2.50' });
		expect(r).toMatchObject({ ok: false, reason: 'rate-limited' });
		expect((await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '192.0.2.51' })).ok).toBe(
			true
		);
	});
});

describe('cookies', () => {
	function fakeCookies() {
		const calls: { op: string; name: string; value?: string; opts: Record<string, unknown> }[] = [];
		const cookies = {
			set: (name: string, value: string, opts: Record<string, unknown>) =>
				calls.push({ op: 'set', name, value, opts }),
			delete: (name: string, opts: Record<string, unknown>) => calls.push({ op: 'delete', name, opts })
		} as unknown as Cookies;
		return { cookies, calls };
	}

	it('sets an httpOnly, SameSite=Lax, path=/ cookie that expires with the session', () => {
		const { cookies, calls } = fakeCookies();
		const expires = new Date('2026-03-02T16:00:00Z');
		setSessionCookie(cookies, 'tok', expires, true);
		expect(calls).toEqual([
			{
				op: 'set',
				name: SESSION_COOKIE,
				value: 'tok',
				opts: { path: '/', httpOnly: true, sameSite: 'lax', secure: true, expires }
			}
		]);
		deleteSessionCookie(cookies, false);
		expect(calls[1]).toEqual({
			op: 'delete',
			name: SESSION_COOKIE,
			opts: { path: '/', httpOnly: true, sameSite: 'lax', secure: false }
		});
	});

	it('is Secure everywhere except plain-HTTP loopback', () => {
		expect(cookieSecureFor(new URL('http://localhost:3000/'))).toBe(false);
		expect(cookieSecureFor(new URL('http://127.0.0.1:4173/'))).toBe(false);
		expect(cookieSecureFor(new URL('http://[::1]:3000/'))).toBe(false);
		expect(cookieSecureFor(new URL('https://localhost/'))).toBe(true);
		expect(cookieSecureFor(new URL('http://bench.example.com/'))).toBe(true);
		expect(cookieSecureFor(new URL('http://192.168.1.20:3000/'))).toBe(true);
	});

	it('derives the session id from the token with SHA-256 (hex)', () => {
		// FIPS 180-2 appendix B.1 test vector: SHA-256("abc")
		expect(sessionIdFromToken('abc')).toBe(
			'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad'
		);
	});
});
