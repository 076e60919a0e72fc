// Sessions and passwords against an in-memory database with the real migrations: fresh
// session at sign-in (ending the browser's previous one), sign-out, idle and absolute expiry,
// password change and deactivation ending sessions, sign-in throttling (per e-mail + address
// waits that grow, account and address ceilings), the owner's e-mail after repeated failures
// (through a real SMTP server), password strength, client addresses behind proxies, argon2id
// parameters, cookie attributes.
import { afterAll, afterEach, beforeEach, describe, expect, it, vi } from 'vitest';

// A real SMTP server on a free loopback port, started before the mail module reads SMTP_PORT.
const smtp = await vi.hoisted(async () => {
	const { startSmtpCatcher } = await import('../../../tests/unit/smtp-catcher');
	const catcher = await startSmtpCatcher();
	process.env.SMTP_PORT = String(catcher.port);
	return catcher;
});

import { createHash } from 'node:crypto';
import type { Cookies } from '@sveltejs/kit';
import { eq } from 'drizzle-orm';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import {
	PASSWORD_CHANGE_LIMITS,
	SESSION_COOKIE,
	SIGN_IN_LIMITS,
	addressKey,
	backoffDelayS,
	changePassword,
	clientAddress,
	cookieSecureFor,
	deleteSessionCookie,
	hashPassword,
	passwordWeakness,
	purgeExpiredSessions,
	sessionIdFromToken,
	sessionIsLive,
	setSessionCookie,
	signIn,
	signOut,
	validateSessionToken,
	verifyPassword
} from './auth';
import { env } from './env';
import { isDomainError } from './errors';
import { updateSettings } from './settings';
import { createUser, updateUser } from './users';

afterAll(async () => {
	await smtp.close();
});

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

	it('signing in again from the same browser ends its previous session', async () => {
		const first = await signInOk(db);
		const second = await signIn(db, {
			email: 'pat@example.com',
			password: PASSWORD,
			ip: '10.0.0.1',
			previousSessionId: first.session.id
		});
		expect(second.ok).toBe(true);
		expect(await validateSessionToken(db, first.token)).toBeNull();
		expect(
			db
				.select()
				.from(table.sessions)
				.all()
				.map((s) => s.id)
		).toEqual([second.ok ? second.session.id : '']);
	});

	it('a failed sign-in leaves the browser’s session alone', async () => {
		const first = await signInOk(db);
		const wrong = await signIn(db, {
			email: 'pat@example.com',
			password: 'not it at all',
			ip: '10.0.0.1',
			previousSessionId: first.session.id
		});
		expect(wrong.ok).toBe(false);
		expect(await validateSessionToken(db, first.token)).not.toBeNull();
	});

	it('a role change ends all the user’s sessions', async () => {
		const a = await signInOk(db);
		expect(sessionIsLive(db, a.session.id)).toBe(true);
		await updateUser(db, userId, { role: 'supervisor' });
		expect(sessionIsLive(db, a.session.id)).toBe(false);
		expect(await validateSessionToken(db, a.token)).toBeNull();
		// Renaming alone keeps them signed in.
		const b = await signInOk(db);
		await updateUser(db, userId, { name: 'Pat B.', role: 'supervisor' });
		expect(sessionIsLive(db, b.session.id)).toBe(true);
	});

	it('knows whether a session still stands (signed out, deactivated, idle, over age)', async () => {
		vi.useFakeTimers({ toFake: ['Date'] });
		vi.setSystemTime(new Date('2026-03-02T08:00:00Z'));
		const a = await signInOk(db);
		const b = await signInOk(db);
		expect(sessionIsLive(db, a.session.id)).toBe(true);
		await signOut(db, a.session.id);
		expect(sessionIsLive(db, a.session.id)).toBe(false);
		vi.setSystemTime(Date.now() + (env.SESSION_IDLE_MINUTES + 1) * MINUTE_MS);
		expect(sessionIsLive(db, b.session.id)).toBe(false);
		vi.setSystemTime(new Date('2026-03-02T08:00:00Z'));
		expect(sessionIsLive(db, b.session.id)).toBe(true);
		db.update(table.users).set({ active: false }).where(eq(table.users.id, userId)).run();
		expect(sessionIsLive(db, b.session.id)).toBe(false);
		expect(sessionIsLive(db, 'no-such-session')).toBe(false);
	});

	it('refuses a new password that is too easy to guess, saying why and what is allowed', async () => {
		const here = await signInOk(db);
		let thrown: unknown;
		try {
			await changePassword(db, userId, PASSWORD, 'Pat Benchley 2026', here.session.id);
		} catch (e) {
			thrown = e;
		}
		expect(isDomainError(thrown) && thrown.status).toBe(400);
		const issue = isDomainError(thrown) ? thrown.issues?.[0] : undefined;
		expect(issue?.path).toBe('newPassword');
		expect(issue?.message).toMatch(/^Too easy to guess: it contains your name/);
		expect(issue?.message).toContain('at least 12 characters');
		// Nothing changed.
		expect((await signIn(db, { email: 'pat@example.com', password: PASSWORD, ip: '10.0.0.8' })).ok).toBe(
			true
		);
	});

	it('slows guesses of the current password on a password change', async () => {
		vi.useFakeTimers({ toFake: ['Date'] });
		let nowMs = new Date('2026-03-02T08:00:00Z').getTime();
		vi.setSystemTime(nowMs);
		const here = await signInOk(db);
		const guess = (current: string) =>
			changePassword(db, userId, current, 'a brand new passphrase', here.session.id);
		for (let i = 0; i < PASSWORD_CHANGE_LIMITS.free + 1; i++)
			expect(await guess(`guess ${i}`)).toEqual({ ok: false, reason: 'wrong-password' });
		// Even the right password waits now; the wait doubles with each further wrong guess.
		expect(await guess(PASSWORD)).toEqual({ ok: false, reason: 'rate-limited', retryAfterS: 2 });
		vi.setSystemTime((nowMs += 2000));
		expect(await guess('guess again')).toEqual({ ok: false, reason: 'wrong-password' });
		expect(await guess(PASSWORD)).toEqual({ ok: false, reason: 'rate-limited', retryAfterS: 4 });
		vi.setSystemTime((nowMs += 4000));
		expect(await guess(PASSWORD)).toEqual({ ok: true });
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

describe('sign-in throttling', () => {
	const OWNER = 'pat@example.com';
	let db: Db;
	let nowMs: number;

	/** Move the (faked) clock on; the limiters read Date. */
	function advanceS(seconds: number) {
		nowMs += seconds * 1000;
		vi.setSystemTime(nowMs);
	}
	const attempt = (ip: string, password = 'not the password', email = OWNER) =>
		signIn(db, { email, password, ip });

	/** A wrong password from `ip`, waiting first if the address must wait; answers the wait it then had. */
	async function failFrom(ip: string, email = OWNER): Promise<void> {
		for (;;) {
			const r = await attempt(ip, 'not the password', email);
			if (r.ok) throw new Error('a wrong password signed in');
			if (r.reason === 'invalid') return;
			advanceS(r.retryAfterS);
		}
	}

	beforeEach(async () => {
		({ db } = await freshDb());
		nowMs = new Date('2026-03-02T08:00:00Z').getTime();
		vi.useFakeTimers({ toFake: ['Date'] });
		vi.setSystemTime(nowMs);
	});
	afterEach(() => {
		vi.useRealTimers();
	});

	it('an attacker’s 50 failures from one address do not stop the owner at another', async () => {
		for (let i = 0; i < 50; i++) await failFrom('198.51.100.7');
		// The attacker's address now waits the longest pair delay…
		const again = await attempt('198.51.100.7', PASSWORD);
		expect(again).toEqual({ ok: false, reason: 'rate-limited', retryAfterS: SIGN_IN_LIMITS.pair.maxDelayS });
		// …while the owner, from an address the account has never used, signs straight in.
		expect((await attempt('192.0.2.10', PASSWORD)).ok).toBe(true);
	});

	it('gives each e-mail + address pair a few free failures, then waits that double up to a cap', async () => {
		const waits: number[] = [];
		for (let i = 1; i <= 14; i++) {
			// Checked at once: the first three failures left no wait, later ones were waited out.
			expect(await attempt('198.51.100.8')).toEqual({ ok: false, reason: 'invalid' });
			if (i <= SIGN_IN_LIMITS.pair.free) continue;
			const probe = await attempt('198.51.100.8', PASSWORD);
			if (probe.ok || probe.reason !== 'rate-limited') throw new Error(`no wait after failure ${i}`);
			waits.push(probe.retryAfterS);
			advanceS(probe.retryAfterS);
		}
		// Exponential backoff (common practice): 2 s after the 4th failure, doubling, capped at 15 min.
		expect(waits).toEqual([2, 4, 8, 16, 32, 64, 128, 256, 512, 900, 900]);
		expect(backoffDelayS(SIGN_IN_LIMITS.pair, 3)).toBe(0);
		expect(backoffDelayS(SIGN_IN_LIMITS.pair, 40)).toBe(900);
	});

	it('refuses an attempt during its wait without checking or counting it, then lets it through', async () => {
		for (let i = 0; i < 4; i++) await failFrom('198.51.100.9');
		const early = await attempt('198.51.100.9', PASSWORD);
		expect(early).toEqual({ ok: false, reason: 'rate-limited', retryAfterS: 2 });
		advanceS(1);
		expect(await attempt('198.51.100.9', PASSWORD)).toEqual({
			ok: false,
			reason: 'rate-limited',
			retryAfterS: 1
		});
		advanceS(1);
		expect((await attempt('198.51.100.9', PASSWORD)).ok).toBe(true);
	});

	it('forgets a pair’s failures after a success', async () => {
		for (let i = 0; i < 3; i++) await failFrom('198.51.100.10');
		expect((await attempt('198.51.100.10', PASSWORD)).ok).toBe(true);
		// Three free failures again.
		for (let i = 0; i < 3; i++)
			expect(await attempt('198.51.100.10')).toEqual({ ok: false, reason: 'invalid' });
		expect((await attempt('198.51.100.10', PASSWORD)).ok).toBe(true);
	});

	it('counts an IPv6 client by its /64, so rotating through one network does not reset the count', async () => {
		for (let i = 1; i <= 4; i++) await failFrom(`2001:db8:aa:bb::${i}`);
		expect(await attempt('2001:db8:aa:bb:ffff::9', PASSWORD)).toMatchObject({ reason: 'rate-limited' });
		expect((await attempt('2001:db8:aa:cc::1', PASSWORD)).ok).toBe(true);
	});

	it(`holds the account ceiling (${SIGN_IN_LIMITS.account.failuresPerWindow} failures an hour) for strange addresses, not the owner’s usual one`, async () => {
		// The owner signed in from the office last week.
		expect((await attempt('192.0.2.20', PASSWORD)).ok).toBe(true);
		advanceS(7 * 86_400);
		// A spread-out attack: three failures from each of 34 addresses, under every pair and address wait.
		let n = 0;
		for (let a = 0; n < SIGN_IN_LIMITS.account.failuresPerWindow; a++)
			for (let k = 0; k < 3 && n < SIGN_IN_LIMITS.account.failuresPerWindow; k++, n++)
				expect(await attempt(`203.0.113.${a}`)).toEqual({ ok: false, reason: 'invalid' });
		// A new address, even with the right password, waits for the hour to pass.
		const fresh = await attempt('198.51.100.200', PASSWORD);
		expect(fresh).toMatchObject({ ok: false, reason: 'rate-limited' });
		if (fresh.ok || fresh.reason !== 'rate-limited') return;
		expect(fresh.retryAfterS).toBeGreaterThan(0);
		expect(fresh.retryAfterS).toBeLessThanOrEqual(SIGN_IN_LIMITS.account.windowS);
		// The owner's usual address is still let in.
		expect((await attempt('192.0.2.20', PASSWORD)).ok).toBe(true);
		// Another account is untouched.
		expect((await attempt('198.51.100.200', PASSWORD, 'other.admin@example.com')).ok).toBe(true);
		// After the window the new address may sign in.
		advanceS(fresh.retryAfterS);
		expect((await attempt('198.51.100.200', PASSWORD)).ok).toBe(true);
	});

	it(`slows an address past ${SIGN_IN_LIMITS.address.free} failures across e-mails, and never shuts it out`, async () => {
		for (let i = 0; i < SIGN_IN_LIMITS.address.free; i++)
			expect(await attempt('192.0.2.50', 'guess', `guess${i}@example.com`)).toEqual({
				ok: false,
				reason: 'invalid'
			});
		expect(await attempt('192.0.2.50', 'guess', 'guess-next@example.com')).toEqual({
			ok: false,
			reason: 'invalid'
		});
		// Past the ceiling: a short wait, growing with every further failure up to a minute.
		expect(await attempt('192.0.2.50', PASSWORD)).toEqual({
			ok: false,
			reason: 'rate-limited',
			retryAfterS: 1
		});
		const waits: number[] = [];
		for (let i = 0; i < 8; i++) {
			advanceS(SIGN_IN_LIMITS.address.maxDelayS);
			await attempt('192.0.2.50', 'guess', `more${i}@example.com`);
			const r = await attempt('192.0.2.50', PASSWORD);
			waits.push(!r.ok && r.reason === 'rate-limited' ? r.retryAfterS : 0);
		}
		expect(waits).toEqual([2, 4, 8, 16, 32, 60, 60, 60]);
		// The owner behind the same address waits at most a minute, then gets in.
		advanceS(SIGN_IN_LIMITS.address.maxDelayS);
		expect((await attempt('192.0.2.50', PASSWORD)).ok).toBe(true);
		// Other addresses never noticed.
		expect((await attempt('192.0.2.51', PASSWORD)).ok).toBe(true);
	});
});

describe('telling the owner about repeated failed sign-ins', () => {
	let db: Db;
	let nowMs: number;
	// Only this suite's shop: notices from other suites may still be on their way.
	const alerts = () => smtp.messages.filter((m) => (m.subject ?? '').startsWith('Harrow & Vane Audio:'));
	const advanceS = (s: number) => vi.setSystemTime((nowMs += s * 1000));
	/** Failures spread over addresses so no wait gets in the way. */
	async function failures(count: number, email = 'pat@example.com', prefix = '203.0.113') {
		for (let i = 0; i < count; i++)
			expect(await signIn(db, { email, password: 'wrong', ip: `${prefix}.${i % 200}` })).toEqual({
				ok: false,
				reason: 'invalid'
			});
	}

	beforeEach(async () => {
		smtp.messages.length = 0;
		({ db } = await freshDb());
		updateSettings(db, { shopName: 'Harrow & Vane Audio' });
		nowMs = new Date('2026-03-02T08:00:00Z').getTime();
		vi.useFakeTimers({ toFake: ['Date'] });
		vi.setSystemTime(nowMs);
	});
	afterEach(() => {
		vi.useRealTimers();
	});

	it(`e-mails the owner at ${SIGN_IN_LIMITS.alert.failures} failures in an hour, in text and HTML`, async () => {
		await failures(SIGN_IN_LIMITS.alert.failures - 1);
		await new Promise((r) => setTimeout(r, 300));
		expect(alerts()).toHaveLength(0);
		await failures(1, 'pat@example.com', '198.51.100');
		const mail = await smtp.waitFor(() => alerts().length > 0).then(() => alerts()[0]);
		expect(mail.subject).toBe('Harrow & Vane Audio: 10 failed sign-ins to your Benchlight account');
		expect(mail.to && !Array.isArray(mail.to) ? mail.to.value[0].address : null).toBe('pat@example.com');
		expect(mail.text).toContain('Hello Pat Benchley');
		expect(mail.text).toContain('10 failed attempts');
		// The first five addresses seen, for the owner to recognise or not.
		expect(mail.text).toContain('from: 203.0.113.0, 203.0.113.1, 203.0.113.2, 203.0.113.3, 203.0.113.4.');
		expect(mail.text).toContain('not locked');
		expect(mail.html).toContain('<strong>10 failed attempts</strong>');
		expect(mail.html).toContain('Harrow &amp; Vane Audio');
	});

	it('sends at most one an hour, and another after the hour when failures go on', async () => {
		await failures(25);
		await smtp.waitFor(() => alerts().length > 0);
		await new Promise((r) => setTimeout(r, 300));
		expect(alerts()).toHaveLength(1);
		advanceS(SIGN_IN_LIMITS.alert.windowS + 1);
		await failures(SIGN_IN_LIMITS.alert.failures, 'pat@example.com', '198.51.100');
		await smtp.waitFor(() => alerts().length === 2);
		expect(alerts()[1].text).toContain('198.51.100.0');
	});

	it('e-mails nobody for an unknown or deactivated account', async () => {
		await failures(12, 'nobody@example.com');
		const pat = db.select().from(table.users).where(eq(table.users.email, 'pat@example.com')).get()!;
		await updateUser(db, pat.id, { active: false });
		await failures(12);
		await new Promise((r) => setTimeout(r, 300));
		expect(alerts()).toHaveLength(0);
	});
});

describe('password strength', () => {
	it('refuses common, patterned and context-specific passwords, naming why', async () => {
		const context = ['pat@example.com', 'Pat Benchley', 'Harrow Audio Works'];
		expect(await passwordWeakness('password1234', context)).toBe(
			'it is too close to a commonly used password'
		);
		expect(await passwordWeakness('qwertyuiop12', context)).toMatch(/commonly used|keyboard|row of keys/);
		expect(await passwordWeakness('aaaaaaaaaaaa', context)).toBe('it repeats a character (like “aaa”)');
		expect(await passwordWeakness('Pat Benchley 1', context)).toBe(
			'it contains your name, your e-mail address or the shop’s name'
		);
		// Built on the shop's or the person's words: zxcvbn alone would score these 3.
		for (const p of ['harrowaudio2026', 'patbenchley12', 'HarrowAudio!', 'benchlight123'])
			expect(await passwordWeakness(p, context), p).toBe(
				'it contains your name, your e-mail address or the shop’s name'
			);
	});

	it('accepts passphrases of unrelated words', async () => {
		const context = ['pat@example.com', 'Pat Benchley', 'Harrow Audio Works'];
		expect(await passwordWeakness('zebra kettle violin', context)).toBeNull();
		expect(await passwordWeakness(PASSWORD, context)).toBeNull();
		// Using a context word is fine inside a passphrase that is strong anyway.
		expect(await passwordWeakness('harrow bench lamp sings at dusk', context)).toBeNull();
	});
});

describe('client address', () => {
	const event = (xff: string | null, socket = '10.0.0.2') => ({
		request: new Request(
			'http://127.0.0.1/login',
			xff === null ? {} : { headers: { 'x-forwarded-for': xff } }
		),
		getClientAddress: () => socket
	});

	it('ignores X-Forwarded-For when no proxy is trusted (the default)', () => {
		expect(env.TRUSTED_PROXY).toBe(0);
		expect(clientAddress(event('203.0.113.9'))).toBe('10.0.0.2');
		expect(clientAddress(event('203.0.113.9'), 0)).toBe('10.0.0.2');
	});

	it('takes the right-most address the trusted proxies did not add', () => {
		// One proxy: it appended the client it saw; anything left of that the client could have sent.
		expect(clientAddress(event('6.6.6.6, 203.0.113.9'), 1)).toBe('203.0.113.9');
		// Two proxies: the outer one appended the client, the inner one the outer proxy.
		expect(clientAddress(event('6.6.6.6, 203.0.113.9, 10.0.0.1'), 2)).toBe('203.0.113.9');
		expect(clientAddress(event('2001:db8::5'), 1)).toBe('2001:db8::5');
	});

	it('falls back to the connection when the header is missing, short or not an address', () => {
		expect(clientAddress(event(null), 1)).toBe('10.0.0.2');
		expect(clientAddress(event('203.0.113.9'), 2)).toBe('203.0.113.9');
		expect(clientAddress(event('6.6.6.6, not-an-ip'), 1)).toBe('10.0.0.2');
	});

	it('reads the raw socket when adapter-node hands it over, whatever getClientAddress says', () => {
		const e = { ...event('203.0.113.9'), platform: { req: { socket: { remoteAddress: '10.9.9.9' } } } };
		expect(clientAddress(e, 0)).toBe('10.9.9.9');
	});

	it('keys IPv4 as is (also IPv4-mapped) and IPv6 by its /64', () => {
		expect(addressKey('203.0.113.9')).toBe('203.0.113.9');
		expect(addressKey('::ffff:203.0.113.9')).toBe('203.0.113.9');
		// RFC 4291 §2.2: '::' stands for the run of zero groups.
		expect(addressKey('2001:db8::1')).toBe('2001:db8:0:0::/64');
		expect(addressKey('2001:DB8:0:0:8:800:200C:417A')).toBe('2001:db8:0:0::/64');
		expect(addressKey('2001:db8:aa:bb::9')).toBe('2001:db8:aa:bb::/64');
		expect(addressKey('fe80::1%eth0')).toBe('fe80:0:0:0::/64');
		expect(addressKey('::1')).toBe('0:0:0:0::/64');
		expect(addressKey('')).toBe('unknown');
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
