// Sessions and passwords (OWASP ASVS V2/V3): lucia 3 over the Drizzle tables, a random
// token in an httpOnly cookie with only its SHA-256 stored, idle and absolute lifetimes,
// argon2id hashes, and sign-in rate limits per account and per address.
// Relative imports only: the seed and backup scripts run this under tsx, without `$lib`.
import { createHash, randomBytes } from 'node:crypto';
import { hash, verify } from '@node-rs/argon2';
import { DrizzleSQLiteAdapter } from '@lucia-auth/adapter-drizzle';
import { Lucia, TimeSpan } from 'lucia';
import { and, eq, lte, ne, or } from 'drizzle-orm';
import { RateLimiterMemory, RateLimiterRes } from 'rate-limiter-flexible';
import type { Cookies } from '@sveltejs/kit';
import type { Db } from './db/open';
import * as table from './db/schema';
import type { Role } from './db/schema';
import { env } from './env';

export interface SessionUser {
	id: string;
	email: string;
	name: string;
	role: Role;
}

export interface SessionInfo {
	id: string;
	expiresAt: Date;
	createdAt: Date;
}

export const SESSION_COOKIE = 'benchlight_session';

/** OWASP Password Storage Cheat Sheet minimum for argon2id: 19 MiB, 2 iterations, 1 lane. */
const ARGON2_OPTIONS = { memoryCost: 19456, timeCost: 2, parallelism: 1, outputLen: 32 } as const;

/** Failed sign-ins tolerated before a pause (ASVS V2.2.1 allows at most 100 an hour per account). */
export const SIGN_IN_LIMITS = {
	perAccount: { points: 5, durationS: 15 * 60 },
	perAddress: { points: 30, durationS: 15 * 60 }
} as const;

// ── passwords ───────────────────────────────────────────────────────────────

/** argon2id (the library's default algorithm) at the OWASP parameters. */
export function hashPassword(password: string): Promise<string> {
	return hash(password, ARGON2_OPTIONS);
}

export async function verifyPassword(passwordHash: string, password: string): Promise<boolean> {
	try {
		return await verify(passwordHash, password);
	} catch {
		// A malformed stored hash must read as "wrong password", never as a crash.
		return false;
	}
}

let dummyHash: Promise<string> | undefined;
/** A hash to verify against when the e-mail is unknown, so both paths cost the same. */
function getDummyHash(): Promise<string> {
	dummyHash ??= hashPassword(randomBytes(24).toString('base64url'));
	return dummyHash;
}

// ── tokens ──────────────────────────────────────────────────────────────────

const TOKEN_PATTERN = /^[a-z2-7]{32}$/;

/** 160 random bits in lower-case base32 (no padding): what sits in the cookie. */
function generateSessionToken(): string {
	const alphabet = 'abcdefghijklmnopqrstuvwxyz234567';
	const bytes = randomBytes(20);
	let bits = 0;
	let value = 0;
	let out = '';
	for (const byte of bytes) {
		value = (value << 8) | byte;
		bits += 8;
		while (bits >= 5) {
			out += alphabet[(value >>> (bits - 5)) & 31];
			bits -= 5;
		}
	}
	return out;
}

/** The session id stored in the database: SHA-256 of the token, hex. */
export function sessionIdFromToken(token: string): string {
	return createHash('sha256').update(token).digest('hex');
}

// ── per-database context (lucia instance and limiters) ──────────────────────

function createLucia(db: Db) {
	const adapter = new DrizzleSQLiteAdapter(db, table.sessions, table.users);
	return new Lucia(adapter, {
		// lucia slides the expiry forward once less than half of it is left, so a session
		// idles out between half and all of SESSION_IDLE_MINUTES after its last use.
		sessionExpiresIn: new TimeSpan(env.SESSION_IDLE_MINUTES, 'm'),
		getSessionAttributes: (attributes) => ({ createdAt: attributes.createdAt }),
		getUserAttributes: (attributes) => ({
			email: attributes.email,
			name: attributes.name,
			role: attributes.role,
			active: attributes.active
		})
	});
}

declare module 'lucia' {
	interface Register {
		Lucia: ReturnType<typeof createLucia>;
		DatabaseSessionAttributes: { createdAt: Date };
		DatabaseUserAttributes: { email: string; name: string; role: Role; active: boolean };
	}
}

interface AuthContext {
	lucia: ReturnType<typeof createLucia>;
	accountLimiter: RateLimiterMemory;
	addressLimiter: RateLimiterMemory;
}

// One context per database handle: the app has one; each test database gets its own
// limiters, so tests do not leak rate-limit state into each other.
const contexts = new WeakMap<Db, AuthContext>();

function context(db: Db): AuthContext {
	let ctx = contexts.get(db);
	if (!ctx) {
		ctx = {
			lucia: createLucia(db),
			accountLimiter: new RateLimiterMemory({
				keyPrefix: 'signin-account',
				points: SIGN_IN_LIMITS.perAccount.points,
				duration: SIGN_IN_LIMITS.perAccount.durationS
			}),
			addressLimiter: new RateLimiterMemory({
				keyPrefix: 'signin-address',
				points: SIGN_IN_LIMITS.perAddress.points,
				duration: SIGN_IN_LIMITS.perAddress.durationS
			})
		};
		contexts.set(db, ctx);
	}
	return ctx;
}

const absoluteLifetimeMs = () => env.SESSION_ABSOLUTE_HOURS * 3600 * 1000;

// ── sessions ────────────────────────────────────────────────────────────────

/**
 * Start a fresh session for `userId` (never reuses an old id, so a planted cookie is
 * worthless after sign-in). Returns the cookie token and when the cookie should expire.
 */
export async function createSession(
	db: Db,
	userId: string
): Promise<{ token: string; session: SessionInfo }> {
	const token = generateSessionToken();
	const createdAt = new Date();
	const session = await context(db).lucia.createSession(
		userId,
		{ createdAt },
		{ sessionId: sessionIdFromToken(token) }
	);
	return {
		token,
		session: { id: session.id, expiresAt: capExpiry(session.expiresAt, createdAt), createdAt }
	};
}

function capExpiry(expiresAt: Date, createdAt: Date): Date {
	const absoluteEnd = createdAt.getTime() + absoluteLifetimeMs();
	return new Date(Math.min(expiresAt.getTime(), absoluteEnd));
}

export interface ValidatedSession {
	user: SessionUser;
	session: SessionInfo;
	/** The expiry moved forward: send the cookie again with `session.expiresAt`. */
	fresh: boolean;
}

/**
 * The user and session for a cookie token, or null when the token is unknown, idle-expired,
 * past its absolute lifetime or belongs to a deactivated user (those sessions are deleted).
 */
export async function validateSessionToken(db: Db, token: string): Promise<ValidatedSession | null> {
	if (!TOKEN_PATTERN.test(token)) return null;
	const { lucia } = context(db);
	const sessionId = sessionIdFromToken(token);
	const { session, user } = await lucia.validateSession(sessionId);
	if (!session || !user) return null;
	const createdAt = session.createdAt;
	if (!user.active || Date.now() >= createdAt.getTime() + absoluteLifetimeMs()) {
		await lucia.invalidateSession(sessionId);
		return null;
	}
	return {
		user: { id: user.id, email: user.email, name: user.name, role: user.role },
		session: { id: session.id, createdAt, expiresAt: capExpiry(session.expiresAt, createdAt) },
		fresh: session.fresh
	};
}

/** Sign-out: the session ends on the server, whatever the browser does with its cookie. */
export async function signOut(db: Db, sessionId: string): Promise<void> {
	await context(db).lucia.invalidateSession(sessionId);
}

/** End every session of a user, or every one but `exceptSessionId` (password change). */
export async function endUserSessions(
	db: Db,
	userId: string,
	exceptSessionId?: string | null
): Promise<void> {
	if (exceptSessionId) {
		db.delete(table.sessions)
			.where(and(eq(table.sessions.userId, userId), ne(table.sessions.id, exceptSessionId)))
			.run();
	} else {
		await context(db).lucia.invalidateUserSessions(userId);
	}
}

/** Drop sessions past their idle expiry or their absolute lifetime (housekeeping). */
export function purgeExpiredSessions(db: Db): number {
	const nowMs = Date.now();
	const result = db
		.delete(table.sessions)
		.where(
			or(
				lte(table.sessions.expiresAt, Math.floor(nowMs / 1000)),
				lte(table.sessions.createdAt, new Date(nowMs - absoluteLifetimeMs()))
			)
		)
		.run();
	return result.changes;
}

// ── cookies ─────────────────────────────────────────────────────────────────

/** Secure cookies everywhere but plain-HTTP loopback (the dev server and the e2e run). */
export function cookieSecureFor(url: URL): boolean {
	const loopback = ['localhost', '127.0.0.1', '[::1]', '::1'].includes(url.hostname);
	return url.protocol === 'https:' || !loopback;
}

export function setSessionCookie(cookies: Cookies, token: string, expiresAt: Date, secure: boolean): void {
	cookies.set(SESSION_COOKIE, token, {
		path: '/',
		httpOnly: true,
		sameSite: 'lax',
		secure,
		expires: expiresAt
	});
}

/** Pass the same `secure` as when the cookie was set; browsers ignore a mismatched delete. */
export function deleteSessionCookie(cookies: Cookies, secure?: boolean): void {
	cookies.delete(SESSION_COOKIE, {
		path: '/',
		httpOnly: true,
		sameSite: 'lax',
		...(secure === undefined ? {} : { secure })
	});
}

// ── sign-in ─────────────────────────────────────────────────────────────────

export type SignInResult =
	| { ok: true; user: SessionUser; token: string; expiresAt: Date; session: SessionInfo }
	| { ok: false; reason: 'invalid' | 'rate-limited'; retryAfterS?: number };

/** What the sign-in form says on any failure: it must not reveal which field was wrong. */
export const SIGN_IN_FAILED_MESSAGE = 'That e-mail and password do not match an active account.';

function retryAfter(res: RateLimiterRes | null, points: number): number | null {
	if (res && res.consumedPoints >= points) return Math.max(1, Math.ceil(res.msBeforeNext / 1000));
	return null;
}

async function recordFailure(limiter: RateLimiterMemory, key: string): Promise<void> {
	try {
		await limiter.consume(key);
	} catch (e) {
		// A rejection here means the limit is now reached; the next attempt is refused.
		if (!(e instanceof RateLimiterRes)) throw e;
	}
}

/**
 * Check the credentials and start a fresh session. Unknown e-mail, wrong password and a
 * deactivated account all answer `invalid` after the same argon2 work.
 */
export async function signIn(
	db: Db,
	input: { email: string; password: string; ip: string }
): Promise<SignInResult> {
	const { accountLimiter, addressLimiter } = context(db);
	const accountKey = input.email.trim().toLowerCase();
	const addressKey = input.ip || 'unknown';

	const [accountState, addressState] = await Promise.all([
		accountLimiter.get(accountKey),
		addressLimiter.get(addressKey)
	]);
	const waitS = Math.max(
		retryAfter(accountState, SIGN_IN_LIMITS.perAccount.points) ?? 0,
		retryAfter(addressState, SIGN_IN_LIMITS.perAddress.points) ?? 0
	);
	if (waitS > 0) return { ok: false, reason: 'rate-limited', retryAfterS: waitS };

	const user = db.select().from(table.users).where(eq(table.users.email, accountKey)).get();
	let passwordOk = false;
	if (user) passwordOk = await verifyPassword(user.passwordHash, input.password);
	else await verifyPassword(await getDummyHash(), input.password);

	if (!user || !passwordOk || !user.active) {
		await Promise.all([recordFailure(accountLimiter, accountKey), recordFailure(addressLimiter, addressKey)]);
		return { ok: false, reason: 'invalid' };
	}

	await accountLimiter.delete(accountKey);
	const { token, session } = await createSession(db, user.id);
	return {
		ok: true,
		user: { id: user.id, email: user.email, name: user.name, role: user.role },
		token,
		expiresAt: session.expiresAt,
		session
	};
}

// ── password change ─────────────────────────────────────────────────────────

export type ChangePasswordResult = { ok: true } | { ok: false; reason: 'wrong-password' | 'no-user' };

/**
 * Change one's own password after checking the current one; every other session of the
 * user ends (ASVS V3.3.3), the one in `keepSessionId` stays signed in.
 */
export async function changePassword(
	db: Db,
	userId: string,
	currentPassword: string,
	newPassword: string,
	keepSessionId: string | null
): Promise<ChangePasswordResult> {
	const user = db.select().from(table.users).where(eq(table.users.id, userId)).get();
	if (!user || !user.active) return { ok: false, reason: 'no-user' };
	if (!(await verifyPassword(user.passwordHash, currentPassword)))
		return { ok: false, reason: 'wrong-password' };
	await setPassword(db, userId, newPassword, keepSessionId);
	return { ok: true };
}

/** Store a new hash and end the user's sessions except `keepSessionId` (admin reset: none kept). */
export async function setPassword(
	db: Db,
	userId: string,
	newPassword: string,
	keepSessionId: string | null
): Promise<void> {
	const passwordHash = await hashPassword(newPassword);
	db.transaction((tx) => {
		tx.update(table.users)
			.set({ passwordHash, updatedAt: new Date() })
			.where(eq(table.users.id, userId))
			.run();
		const others = keepSessionId
			? and(eq(table.sessions.userId, userId), ne(table.sessions.id, keepSessionId))
			: eq(table.sessions.userId, userId);
		tx.delete(table.sessions).where(others).run();
	});
}
