// What the authorization matrices (API routes, and pages with their form actions) share: route
// discovery on disk, the app's database seeded with the demo shop, the four callers with real
// sessions, ids of seeded things a request can point at, and a savepoint around every case so
// each caller starts from the same state.
import { afterEach, beforeEach } from 'vitest';
import { readdirSync, statSync } from 'node:fs';
import { join, relative, resolve, sep } from 'node:path';
import type { Cookies } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { createSession, type SessionInfo, type SessionUser } from '$lib/server/auth';
import { SIGN_OFF_DEMO, seedDemo } from '../../scripts/seed';

export const ROLES = ['signed-out', 'technician', 'supervisor', 'admin'] as const;
export type Caller = (typeof ROLES)[number];

export interface Who {
	user: SessionUser | null;
	session: SessionInfo | null;
}

/** Ids of seeded things a request can point at. Extend it when your routes need more. */
export interface Fixtures {
	db: typeof db;
	users: Record<'admin' | 'supervisor' | 'tech1' | 'tech2', string>;
	/** A job in `received`, with no parts. */
	jobId: number;
	/** A job in `awaiting-review`: the one approval is tried on. */
	reviewJobId: number;
	/** A signed-off (`approved`, so locked) job: the one reopening is tried on. */
	approvedJobId: number;
	/** The seeded demo job awaiting sign-off that meets the shop's requirements (after snapshot by a technician). */
	signOffJobId: number;
	/** A part and the job it belongs to (an open job, so the part may change). */
	partJobId: number;
	partId: number;
}

// ── discovery ───────────────────────────────────────────────────────────────

export const ROUTES_DIR = resolve(process.cwd(), 'src/routes');

/** Files named one of `names` under `dir`, recursively. */
export function findServerFiles(dir: string, names = ['+server.ts', '+server.js']): string[] {
	const out: string[] = [];
	for (const name of readdirSync(dir)) {
		const path = join(dir, name);
		if (statSync(path).isDirectory()) out.push(...findServerFiles(path, names));
		else if (names.includes(name)) out.push(path);
	}
	return out;
}

/** The SvelteKit route id of a route file (`/jobs/[id]`). */
export function routeIdOf(file: string): string {
	const rel = relative(ROUTES_DIR, file).split(sep).slice(0, -1);
	// Route groups like (app) are not part of the URL.
	return '/' + rel.filter((seg) => !/^\(.*\)$/.test(seg)).join('/');
}

/** A route id with its params filled in: `/jobs/[id]` + { id: '7' } → `/jobs/7`. */
export function fillRoute(routeId: string, params: Record<string, string>): string {
	return routeId.replace(/\[(?:\.\.\.)?([^\]=]+)(?:=[^\]]+)?\]/g, (_, key: string) => {
		if (!(key in params)) throw new Error(`request() for ${routeId} must give params.${key}`);
		return encodeURIComponent(params[key]);
	});
}

export function fakeCookies(): Cookies {
	const jar = new Map<string, string>();
	return {
		get: (name: string) => jar.get(name),
		getAll: () => [...jar].map(([name, value]) => ({ name, value })),
		set: (name: string, value: string) => void jar.set(name, value),
		delete: (name: string) => void jar.delete(name),
		serialize: (name: string, value: string) => `${name}=${value}`
	} as Cookies;
}

// ── the seeded shop and its callers ─────────────────────────────────────────

/** Seed the app's (in-memory) database with the demo shop and sign in one caller per role. */
export async function setupFixtures(): Promise<{ fx: Fixtures; callers: Record<Caller, Who> }> {
	await seedDemo(db);
	const sqlite = db.$client;
	const userId = (email: string) =>
		(sqlite.prepare('SELECT id FROM users WHERE email = ?').get(email) as { id: string }).id;
	const users = {
		admin: userId('admin@example.com'),
		supervisor: userId('supervisor@example.com'),
		tech1: userId('tech1@example.com'),
		tech2: userId('tech2@example.com')
	};
	const jobIn = (status: string) =>
		(sqlite.prepare('SELECT id FROM jobs WHERE status = ? ORDER BY id LIMIT 1').get(status) as { id: number })
			.id;
	const part = sqlite
		.prepare(
			`SELECT p.id, p.job_id AS jobId FROM parts p JOIN jobs j ON j.id = p.job_id
			 WHERE j.status NOT IN ('approved', 'returned') ORDER BY p.id LIMIT 1`
		)
		.get() as { id: number; jobId: number };
	const fx: Fixtures = {
		db,
		users,
		jobId: jobIn('received'),
		reviewJobId: jobIn('awaiting-review'),
		approvedJobId: jobIn('approved'),
		signOffJobId: (
			sqlite
				.prepare('SELECT id FROM jobs WHERE make = ? AND model = ?')
				.get(SIGN_OFF_DEMO.make, SIGN_OFF_DEMO.model) as { id: number }
		).id,
		partJobId: part.jobId,
		partId: part.id
	};

	const who = async (email: string, key: keyof Fixtures['users']): Promise<Who> => {
		const { session } = await createSession(db, users[key]);
		const row = sqlite
			.prepare('SELECT id, email, name, role FROM users WHERE email = ?')
			.get(email) as SessionUser;
		return { user: row, session };
	};
	const callers: Record<Caller, Who> = {
		'signed-out': { user: null, session: null },
		technician: await who('tech1@example.com', 'tech1'),
		supervisor: await who('supervisor@example.com', 'supervisor'),
		admin: await who('admin@example.com', 'admin')
	};
	return { fx, callers };
}

/** Run every case inside a savepoint that is rolled back after it. */
export function useSavepoints(): void {
	beforeEach(() => {
		db.$client.exec('SAVEPOINT authz_case');
	});
	afterEach(() => {
		db.$client.exec('ROLLBACK TO authz_case');
		db.$client.exec('RELEASE authz_case');
	});
}
