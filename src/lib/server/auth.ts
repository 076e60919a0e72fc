// Sessions and passwords (OWASP ASVS V2/V3): lucia 3 over the Drizzle tables, a random
// token in an httpOnly cookie with only its SHA-256 stored, idle and absolute lifetimes,
// argon2id hashes, a strength estimate for new passwords, and sign-in throttling that slows
// guessing without letting anyone lock the owner out.
// Relative imports only: the seed and backup scripts run this under tsx, without `$lib`.
import { createHash, randomBytes } from 'node:crypto';
import { isIP } from 'node:net';
import { hash, verify } from '@node-rs/argon2';
import { DrizzleSQLiteAdapter } from '@lucia-auth/adapter-drizzle';
import { Lucia, TimeSpan } from 'lucia';
import { and, eq, lte, ne, or } from 'drizzle-orm';
import { RateLimiterMemory, type RateLimiterRes } from 'rate-limiter-flexible';
import type { Cookies } from '@sveltejs/kit';
import type { Db } from './db/open';
import * as table from './db/schema';
import type { Role } from './db/schema';
import { env } from './env';
import { DomainError } from './errors';
import { sendMail, signInAlertMail } from './mail';
import { getSetting } from './settings';
import { PASSWORD_MIN_LENGTH } from '../schemas/users';

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

/** How long waits grow: none for the first `free` failures, then doubling from `firstDelayS` up to `maxDelayS`. */
export interface BackoffPolicy {
	free: number;
	firstDelayS: number;
	maxDelayS: number;
	/** The failure count is forgotten this long after the last failure. */
	forgetAfterS: number;
}

/**
 * Sign-in throttling (ASVS V2.2.1: slow guessing without denying the owner).
 * - pair: one e-mail from one address. The owner's own address has its own count, so an
 *   attacker elsewhere never makes the owner wait.
 * - account: failures for one e-mail from all addresses in an hour; at the ceiling only
 *   addresses the account signed in from recently may still try.
 * - address: failures from one address across all e-mails; past the ceiling each attempt
 *   waits a little (a shared office address is slowed, never shut out).
 * - alert: the owner gets an e-mail at this many failures in an hour, at most once an hour.
 */
export const SIGN_IN_LIMITS = {
	pair: { free: 3, firstDelayS: 2, maxDelayS: 15 * 60, forgetAfterS: 24 * 3600 },
	account: { failuresPerWindow: 100, windowS: 3600, knownAddressDays: 30, knownAddressesKept: 10 },
	address: { free: 30, firstDelayS: 1, maxDelayS: 60, forgetAfterS: 3600 },
	alert: { failures: 10, windowS: 3600 }
} as const satisfies {
	pair: BackoffPolicy;
	address: BackoffPolicy;
	account: Record<string, number>;
	alert: Record<string, number>;
};

/** Guesses of the current password on a password change, per user. */
export const PASSWORD_CHANGE_LIMITS: BackoffPolicy = {
	free: 3,
	firstDelayS: 2,
	maxDelayS: 15 * 60,
	forgetAfterS: 24 * 3600
};

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

// ── password strength ───────────────────────────────────────────────────────

/** zxcvbn score 3: "safely unguessable", about 10⁸ guesses or more (zxcvbn's own scale). */
export const PASSWORD_MIN_SCORE = 3;
/**
 * A password built on the person's or the shop's own words must reach the top score (4, about
 * 10¹⁰ guesses): an attacker who targets this shop tries those words first, and zxcvbn prices
 * them as single guesses (so "harrowaudio2026" alone would just reach 3).
 */
export const PASSWORD_MIN_SCORE_WITH_CONTEXT = 4;
/**
 * Only the first characters are estimated: the matcher's cost grows quickly with length (a
 * 128-character repeat took ~70 ms here, 64 ~40 ms), and a long passphrase is rarely weak.
 */
const STRENGTH_MAX_LENGTH = 64;

type Zxcvbn = { check(password: string, userInputs?: string[]): ZxcvbnResult };
type ZxcvbnResult = {
	score: number;
	feedback: { warning: string | null };
	sequence: { pattern: string; dictionaryName?: string }[];
};

let estimator: Promise<Zxcvbn> | undefined;
/** Built on first use (its dictionaries take ~120 ms to prepare), then kept. */
function getEstimator(): Promise<Zxcvbn> {
	estimator ??= Promise.all([import('@zxcvbn-ts/core'), import('@zxcvbn-ts/language-common')]).then(
		([core, common]) =>
			new core.ZxcvbnFactory({
				dictionary: { ...common.dictionary },
				graphs: common.adjacencyGraphs,
				maxLength: STRENGTH_MAX_LENGTH
			}) as Zxcvbn
	);
	return estimator;
}

/** zxcvbn's warning keys (it leaves wording to the app), as the reason a password is refused. */
const WEAKNESS_REASONS: Record<string, string> = {
	straightRow: 'it is a straight row of keys',
	keyPattern: 'it is a keyboard pattern',
	simpleRepeat: 'it repeats a character (like “aaa”)',
	extendedRepeat: 'it repeats a group of characters (like “abcabc”)',
	sequences: 'it is a common sequence (like “abc” or “6543”)',
	recentYears: 'it leans on recent years',
	dates: 'it leans on a date',
	topTen: 'it is one of the most used passwords',
	topHundred: 'it is one of the most used passwords',
	common: 'it is a commonly used password',
	similarToCommon: 'it is too close to a commonly used password',
	wordByItself: 'a single word is easy to guess',
	namesByThemselves: 'names on their own are easy to guess',
	commonNames: 'common names are easy to guess',
	userInputs: 'it contains your name, your e-mail address or the shop’s name',
	pwned: 'it has appeared in a data breach'
};

/** What a new password must be, said the same way wherever one is refused. */
export const PASSWORD_RULE =
	`Use at least ${PASSWORD_MIN_LENGTH} characters that are hard to guess — three or four unrelated words work well — ` +
	'and avoid common passwords, keyboard patterns, dates, and your name, e-mail address or the shop’s name.';

/** Words a password must not lean on: the person's name and e-mail, the shop's name, the product's name. */
function contextWords(parts: string[]): string[] {
	const words = new Set<string>(['benchlight']);
	for (const part of parts) {
		const s = part.trim().toLowerCase();
		if (!s) continue;
		words.add(s);
		for (const w of s.split(/[^\p{L}\p{N}]+/u)) if (w.length >= 3) words.add(w);
	}
	return [...words];
}

/** Why `password` is too easy to guess given `context` (names, e-mail, shop), or null when it is fine. */
export async function passwordWeakness(password: string, context: string[]): Promise<string | null> {
	const result = (await getEstimator()).check(password, contextWords(context));
	const usesContext = result.sequence.some(
		(m) => m.pattern === 'dictionary' && m.dictionaryName === 'userInputs'
	);
	if (result.score >= (usesContext ? PASSWORD_MIN_SCORE_WITH_CONTEXT : PASSWORD_MIN_SCORE)) return null;
	const warning = usesContext ? 'userInputs' : result.feedback.warning;
	return (warning && WEAKNESS_REASONS[warning]) || 'it is too predictable';
}

/**
 * 400 naming `path` when the new password is too easy to guess for this person in this shop.
 * Length is the schema's job; this is the strength estimate with the context words.
 */
export async function assertStrongPassword(
	db: Db,
	password: string,
	who: { email: string; name: string },
	path = 'password'
): Promise<void> {
	const weakness = await passwordWeakness(password, [who.email, who.name, getSetting(db, 'shopName')]);
	if (weakness) {
		const message = `Too easy to guess: ${weakness}. ${PASSWORD_RULE}`;
		throw new DomainError('invalid', 'Choose a stronger password', [{ path, message }]);
	}
}

// ── client address ──────────────────────────────────────────────────────────

/** What the client address is read from: a SvelteKit request event or a test's stand-in. */
export interface AddressSource {
	request: Request;
	getClientAddress(): string;
	platform?: unknown;
}

/** The connection's own address (adapter-node's raw socket), whatever ADDRESS_HEADER says. */
function socketAddress(event: AddressSource): string {
	const req = (event.platform as { req?: { socket?: { remoteAddress?: string } } } | undefined)?.req;
	return req?.socket?.remoteAddress ?? event.getClientAddress();
}

/**
 * The client's address. With `trustedProxies` = 0 (TRUSTED_PROXY off) it is the connection's
 * address and X-Forwarded-For is ignored, so a client cannot choose its own. With N trusted
 * proxies it is the Nth entry from the right of X-Forwarded-For (the right-most one no trusted
 * proxy added; adapter-node's XFF_DEPTH rule). Unlike adapter-node's ADDRESS_HEADER, a request
 * without the header, or with a malformed entry there, falls back to the connection's address
 * instead of failing.
 */
export function clientAddress(event: AddressSource, trustedProxies: number = env.TRUSTED_PROXY): string {
	const socket = socketAddress(event);
	if (trustedProxies <= 0) return socket;
	const header = event.request.headers.get('x-forwarded-for');
	if (!header) return socket;
	const hops = header.split(',').map((h) => h.trim());
	const hop = hops[Math.max(0, hops.length - trustedProxies)];
	return hop && isIP(hop) ? hop : socket;
}

/**
 * The key an address is counted under: IPv4 as is (also when IPv4-mapped), IPv6 by its /64,
 * since one home or one server usually holds a whole /64 and could otherwise rotate through it.
 */
export function addressKey(ip: string): string {
	const a = ip.trim().toLowerCase().split('%')[0];
	if (a.startsWith('::ffff:') && isIP(a.slice(7)) === 4) return a.slice(7);
	if (isIP(a) === 4) return a;
	if (isIP(a) === 6) return `${ipv6Prefix64(a)}::/64`;
	return a ? `other:${a.slice(0, 64)}` : 'unknown';
}

function ipv6Prefix64(a: string): string {
	const [head, tail] = a.includes('::') ? a.split('::') : [a, undefined];
	const h = head ? head.split(':') : [];
	const t = tail ? tail.split(':') : [];
	// A trailing dotted IPv4 part stands for two groups.
	const tGroups = t.length && t[t.length - 1].includes('.') ? t.length + 1 : t.length;
	const groups = tail === undefined ? h : [...h, ...Array(Math.max(0, 8 - h.length - tGroups)).fill('0')];
	return groups
		.slice(0, 4)
		.map((g) => parseInt(g, 16).toString(16))
		.join(':');
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

// ── waits ───────────────────────────────────────────────────────────────────

/** A wait as people say it: "40 seconds", "1 minute", "15 minutes". */
export function waitText(seconds: number): string {
	if (seconds < 60) return `${seconds} second${seconds === 1 ? '' : 's'}`;
	const minutes = Math.ceil(seconds / 60);
	return `${minutes} minute${minutes === 1 ? '' : 's'}`;
}

/** Seconds to wait after the `failures`-th failure under `policy`. */
export function backoffDelayS(policy: BackoffPolicy, failures: number): number {
	if (failures <= policy.free) return 0;
	return Math.min(policy.maxDelayS, policy.firstDelayS * 2 ** (failures - policy.free - 1));
}

/** A record that has not expired (the store drops expired keys on a timer, so check the time too). */
function live(res: RateLimiterRes | null): RateLimiterRes | null {
	return res && res.msBeforeNext > 0 ? res : null;
}

/** Failures per key with waits that grow as they add up (rate-limiter-flexible's memory store). */
class Backoff {
	private readonly failures: RateLimiterMemory;
	private readonly waits: RateLimiterMemory;

	constructor(
		name: string,
		private readonly policy: BackoffPolicy
	) {
		this.failures = new RateLimiterMemory({
			keyPrefix: `${name}-failures`,
			points: Number.MAX_SAFE_INTEGER,
			duration: policy.forgetAfterS
		});
		this.waits = new RateLimiterMemory({ keyPrefix: `${name}-wait`, points: 1, duration: policy.maxDelayS });
	}

	/** Seconds before `key` may try again (0: now). */
	async waitS(key: string): Promise<number> {
		const res = live(await this.waits.get(key));
		return res ? Math.ceil(res.msBeforeNext / 1000) : 0;
	}

	async count(key: string): Promise<number> {
		return live(await this.failures.get(key))?.consumedPoints ?? 0;
	}

	/** Count a failure (forgotten `forgetAfterS` after this one) and start its wait. */
	async fail(key: string): Promise<number> {
		const n = (await this.count(key)) + 1;
		await this.failures.set(key, n, this.policy.forgetAfterS);
		const delayS = backoffDelayS(this.policy, n);
		if (delayS > 0) await this.waits.block(key, delayS);
		return n;
	}

	async clear(key: string): Promise<void> {
		await Promise.all([this.failures.delete(key), this.waits.delete(key)]);
	}
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
	pair: Backoff;
	address: Backoff;
	/** Failures per e-mail in a fixed window (the account ceiling and the alert count). */
	account: RateLimiterMemory;
	/** Accounts whose owner was told in the last window. */
	alerted: RateLimiterMemory;
	/** Addresses each account signed in from lately (e-mail → address key → last success ms). */
	knownAddresses: Map<string, Map<string, number>>;
	/** A few addresses of the failures in the current window, for the alert (existing accounts only). */
	failureAddresses: Map<string, string[]>;
	passwordChange: Backoff;
}

// One context per database handle: the app has one; each test database gets its own
// limiters, so tests do not leak rate-limit state into each other.
const contexts = new WeakMap<Db, AuthContext>();

function context(db: Db): AuthContext {
	let ctx = contexts.get(db);
	if (!ctx) {
		ctx = {
			lucia: createLucia(db),
			pair: new Backoff('signin-pair', SIGN_IN_LIMITS.pair),
			address: new Backoff('signin-address', SIGN_IN_LIMITS.address),
			account: new RateLimiterMemory({
				keyPrefix: 'signin-account',
				points: SIGN_IN_LIMITS.account.failuresPerWindow,
				duration: SIGN_IN_LIMITS.account.windowS
			}),
			alerted: new RateLimiterMemory({
				keyPrefix: 'signin-alert',
				points: 1,
				duration: SIGN_IN_LIMITS.alert.windowS
			}),
			knownAddresses: new Map(),
			failureAddresses: new Map(),
			passwordChange: new Backoff('password-change', PASSWORD_CHANGE_LIMITS)
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

/**
 * Whether a session still stands right now: it exists (not signed out, not ended by a password
 * change, role change or deactivation), has not idled out or passed its absolute lifetime, and
 * its user is active. For steps that hand out credentials of their own (bridge tokens).
 */
export function sessionIsLive(db: Db, sessionId: string): boolean {
	const row = db
		.select({
			expiresAt: table.sessions.expiresAt,
			createdAt: table.sessions.createdAt,
			active: table.users.active
		})
		.from(table.sessions)
		.innerJoin(table.users, eq(table.users.id, table.sessions.userId))
		.where(eq(table.sessions.id, sessionId))
		.get();
	if (!row) return false;
	const nowMs = Date.now();
	return row.active && row.expiresAt * 1000 > nowMs && row.createdAt.getTime() + absoluteLifetimeMs() > nowMs;
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
	| { ok: false; reason: 'invalid' }
	| { ok: false; reason: 'rate-limited'; retryAfterS: number };

/** What the sign-in form says on any failure: it must not reveal which field was wrong. */
export const SIGN_IN_FAILED_MESSAGE = 'That e-mail and password do not match an active account.';

/** Whether `address` signed in to the account (by e-mail) within the last knownAddressDays. */
function isKnownAddress(ctx: AuthContext, accountKey: string, address: string): boolean {
	const seenMs = ctx.knownAddresses.get(accountKey)?.get(address);
	return seenMs !== undefined && Date.now() - seenMs < SIGN_IN_LIMITS.account.knownAddressDays * 86_400_000;
}

function rememberAddress(ctx: AuthContext, accountKey: string, address: string): void {
	const seen = ctx.knownAddresses.get(accountKey) ?? new Map<string, number>();
	seen.delete(address);
	seen.set(address, Date.now());
	// A Map keeps insertion order: the first entries are the least recently used.
	while (seen.size > SIGN_IN_LIMITS.account.knownAddressesKept) seen.delete(seen.keys().next().value!);
	ctx.knownAddresses.set(accountKey, seen);
}

/** Seconds an attempt must wait: the pair, the address, and (for a strange address) the account ceiling. */
async function signInWaitS(ctx: AuthContext, accountKey: string, address: string): Promise<number> {
	const [pairS, addressS, account] = await Promise.all([
		ctx.pair.waitS(`${accountKey} ${address}`),
		ctx.address.waitS(address),
		ctx.account.get(accountKey)
	]);
	let accountS = 0;
	const window = live(account);
	if (
		window &&
		window.consumedPoints >= SIGN_IN_LIMITS.account.failuresPerWindow &&
		!isKnownAddress(ctx, accountKey, address)
	) {
		accountS = Math.ceil(window.msBeforeNext / 1000);
	}
	return Math.max(pairS, addressS, accountS);
}

/** Count a failure everywhere it counts; tell an existing account's owner once the alert count is reached. */
async function recordSignInFailure(
	db: Db,
	ctx: AuthContext,
	accountKey: string,
	address: string,
	user: typeof table.users.$inferSelect | undefined
): Promise<void> {
	const [, , window] = await Promise.all([
		ctx.pair.fail(`${accountKey} ${address}`),
		ctx.address.fail(address),
		ctx.account.penalty(accountKey)
	]);
	if (!user || !user.active) return;

	const seen = window.consumedPoints === 1 ? [] : (ctx.failureAddresses.get(user.id) ?? []);
	if (!seen.includes(address) && seen.length < 5) seen.push(address);
	ctx.failureAddresses.set(user.id, seen);

	if (window.consumedPoints < SIGN_IN_LIMITS.alert.failures) return;
	if (live(await ctx.alerted.get(user.id))) return;
	await ctx.alerted.set(user.id, 1, SIGN_IN_LIMITS.alert.windowS);
	ctx.failureAddresses.delete(user.id);
	const mail = signInAlertMail({
		to: user.email,
		name: user.name,
		shopName: getSetting(db, 'shopName'),
		failures: window.consumedPoints,
		windowMinutes: Math.round(SIGN_IN_LIMITS.alert.windowS / 60),
		addresses: seen
	});
	// Not awaited: the answer must not wait for (or reveal) the mail server.
	sendMail(mail).catch((e: unknown) =>
		console.error(`[sign-in alert] could not tell ${user.email}:`, e instanceof Error ? e.message : e)
	);
}

/**
 * Check the credentials and start a fresh session. Unknown e-mail, wrong password and a
 * deactivated account all answer `invalid` after the same argon2 work. An attempt that must
 * still wait answers `rate-limited` without checking the password. On success the browser's
 * previous session (`previousSessionId`, from its cookie) ends: one browser, one session.
 */
export async function signIn(
	db: Db,
	input: { email: string; password: string; ip: string; previousSessionId?: string | null }
): Promise<SignInResult> {
	const ctx = context(db);
	const accountKey = input.email.trim().toLowerCase();
	const address = addressKey(input.ip || 'unknown');

	const waitS = await signInWaitS(ctx, accountKey, address);
	if (waitS > 0) return { ok: false, reason: 'rate-limited', retryAfterS: waitS };

	const user = db.select().from(table.users).where(eq(table.users.email, accountKey)).get();
	let passwordOk = false;
	if (user) passwordOk = await verifyPassword(user.passwordHash, input.password);
	else await verifyPassword(await getDummyHash(), input.password);

	if (!user || !passwordOk || !user.active) {
		await recordSignInFailure(db, ctx, accountKey, address, user);
		return { ok: false, reason: 'invalid' };
	}

	await ctx.pair.clear(`${accountKey} ${address}`);
	rememberAddress(ctx, accountKey, address);
	if (input.previousSessionId) await ctx.lucia.invalidateSession(input.previousSessionId);
	const { token, session } = await createSession(db, user.id);
	return {
		ok: true,
		user: { id: user.id, email: user.email, name: user.name, role: user.role },
		token,
		expiresAt: session.expiresAt,
		session
	};
}

// ── signature ───────────────────────────────────────────────────────────────

export type ConfirmPasswordResult =
	| { ok: true; user: SessionUser }
	| { ok: false; reason: 'invalid' }
	| { ok: false; reason: 'rate-limited'; retryAfterS: number };

/**
 * A signed-in user re-enters their password to sign (an electronic signature). A wrong password
 * counts exactly like a failed sign-in for the same e-mail from the same address (the same
 * waits, account ceiling and owner alert), so signing cannot be used to guess around sign-in.
 */
export async function confirmPassword(
	db: Db,
	input: { userId: string; password: string; ip: string }
): Promise<ConfirmPasswordResult> {
	const ctx = context(db);
	const user = db.select().from(table.users).where(eq(table.users.id, input.userId)).get();
	if (!user || !user.active) return { ok: false, reason: 'invalid' };
	const accountKey = user.email.trim().toLowerCase();
	const address = addressKey(input.ip || 'unknown');
	const waitS = await signInWaitS(ctx, accountKey, address);
	if (waitS > 0) return { ok: false, reason: 'rate-limited', retryAfterS: waitS };
	if (!(await verifyPassword(user.passwordHash, input.password))) {
		await recordSignInFailure(db, ctx, accountKey, address, user);
		return { ok: false, reason: 'invalid' };
	}
	await ctx.pair.clear(`${accountKey} ${address}`);
	return { ok: true, user: { id: user.id, email: user.email, name: user.name, role: user.role } };
}

// ── password change ─────────────────────────────────────────────────────────

export type ChangePasswordResult =
	| { ok: true }
	| { ok: false; reason: 'wrong-password' | 'no-user' }
	| { ok: false; reason: 'rate-limited'; retryAfterS: number };

/**
 * Change one's own password after checking the current one; every other session of the
 * user ends (ASVS V3.3.3), the one in `keepSessionId` stays signed in. Guesses of the current
 * password wait longer and longer, as sign-in does. A new password that is too easy to guess
 * throws a 400 naming `newPassword`.
 */
export async function changePassword(
	db: Db,
	userId: string,
	currentPassword: string,
	newPassword: string,
	keepSessionId: string | null
): Promise<ChangePasswordResult> {
	const { passwordChange } = context(db);
	const waitS = await passwordChange.waitS(userId);
	if (waitS > 0) return { ok: false, reason: 'rate-limited', retryAfterS: waitS };
	const user = db.select().from(table.users).where(eq(table.users.id, userId)).get();
	if (!user || !user.active) return { ok: false, reason: 'no-user' };
	await assertStrongPassword(db, newPassword, user, 'newPassword');
	if (!(await verifyPassword(user.passwordHash, currentPassword))) {
		await passwordChange.fail(userId);
		return { ok: false, reason: 'wrong-password' };
	}
	await passwordChange.clear(userId);
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
