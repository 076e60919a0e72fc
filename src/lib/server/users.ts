// User management for admins: list, create, rename, change role, deactivate/reactivate,
// reset a password. A role change, deactivation or password reset ends the user's sessions;
// a new password must pass the strength estimate (with the person's name and e-mail).
import { asc, eq, and, count } from 'drizzle-orm';
import { generateIdFromEntropySize } from 'lucia';
import type { Db } from './db/open';
import * as table from './db/schema';
import type { Role } from './db/schema';
import { assertStrongPassword, endUserSessions, hashPassword, setPassword } from './auth';
import { userCreateSchema, userPatchSchema, type UserCreate, type UserPatch } from '../schemas/users';
import { DomainError } from './errors';
import { validate } from './validate';
import { audit } from './audit';

/** A user as the admin pages and API see them (never the password hash). */
export interface UserSummary {
	id: string;
	email: string;
	name: string;
	role: Role;
	active: boolean;
	createdAt: string;
	updatedAt: string;
}

/** Someone a job can be assigned to. */
export interface Assignee {
	id: string;
	name: string;
	role: Role;
}

const summaryColumns = {
	id: table.users.id,
	email: table.users.email,
	name: table.users.name,
	role: table.users.role,
	active: table.users.active,
	createdAt: table.users.createdAt,
	updatedAt: table.users.updatedAt
};

function toSummary(row: {
	id: string;
	email: string;
	name: string;
	role: Role;
	active: boolean;
	createdAt: Date;
	updatedAt: Date;
}): UserSummary {
	return { ...row, createdAt: row.createdAt.toISOString(), updatedAt: row.updatedAt.toISOString() };
}

/** User ids are lucia-style lower-case base32 strings; anything else cannot exist. */
export function isUserId(value: string | undefined): value is string {
	return !!value && /^[a-z0-9]{1,64}$/.test(value);
}

export function listUsers(db: Db): UserSummary[] {
	return db.select(summaryColumns).from(table.users).orderBy(asc(table.users.name)).all().map(toSummary);
}

export function getUser(db: Db, id: string): UserSummary | null {
	const row = db.select(summaryColumns).from(table.users).where(eq(table.users.id, id)).get();
	return row ? toSummary(row) : null;
}

/** Active users, for the technician filter and the assignment field (supervisors bench too). */
export function listAssignableUsers(db: Db): Assignee[] {
	return db
		.select({ id: table.users.id, name: table.users.name, role: table.users.role })
		.from(table.users)
		.where(eq(table.users.active, true))
		.orderBy(asc(table.users.name))
		.all();
}

function emailTaken(db: Db, email: string): boolean {
	return !!db.select({ id: table.users.id }).from(table.users).where(eq(table.users.email, email)).get();
}

/** Create an account (409 when the e-mail is in use). */
export async function createUser(
	db: Db,
	input: UserCreate,
	actorId: string | null = null
): Promise<UserSummary> {
	const data = validate(userCreateSchema, input);
	if (emailTaken(db, data.email))
		throw new DomainError('conflict', 'That e-mail address already has an account');
	await assertStrongPassword(db, data.password, data);
	const passwordHash = await hashPassword(data.password);
	const id = generateIdFromEntropySize(10);
	const now = new Date();
	try {
		db.transaction((tx) => {
			tx.insert(table.users)
				.values({
					id,
					email: data.email,
					name: data.name,
					role: data.role,
					passwordHash,
					createdAt: now,
					updatedAt: now
				})
				.run();
			audit(tx, {
				actorId,
				action: 'user.created',
				subject: `user ${data.name}`,
				detail: { userId: id, email: data.email, role: data.role },
				at: now
			});
		});
	} catch (e) {
		// Two admins racing for the same e-mail: the unique index decides.
		if (e instanceof Error && /UNIQUE/.test(e.message))
			throw new DomainError('conflict', 'That e-mail address already has an account');
		throw e;
	}
	return getUser(db, id)!;
}

function activeAdminCount(db: Db): number {
	const row = db
		.select({ n: count() })
		.from(table.users)
		.where(and(eq(table.users.role, 'admin'), eq(table.users.active, true)))
		.get();
	return row?.n ?? 0;
}

/**
 * Rename, change role, (de)activate or reset the password. Changing the role, deactivating or
 * resetting the password ends all the user's sessions (they sign in again under the new terms;
 * bridge tokens are minted only for live sessions). The last active admin cannot be demoted or
 * deactivated (409), so the shop never locks itself out of user management.
 */
export async function updateUser(
	db: Db,
	id: string,
	patch: UserPatch,
	actorId: string | null = null
): Promise<UserSummary> {
	const data = validate(userPatchSchema, patch);
	const current = db.select().from(table.users).where(eq(table.users.id, id)).get();
	if (!current) throw new DomainError('not-found', 'No such user');

	const losesAdmin =
		current.role === 'admin' &&
		current.active &&
		((data.role !== undefined && data.role !== 'admin') || data.active === false);
	if (losesAdmin && activeAdminCount(db) <= 1) {
		throw new DomainError('conflict', 'This is the last active admin: make another admin first');
	}
	if (data.password !== undefined)
		await assertStrongPassword(db, data.password, { email: current.email, name: data.name ?? current.name });

	const changes: Partial<typeof table.users.$inferInsert> = {};
	if (data.name !== undefined) changes.name = data.name;
	if (data.role !== undefined) changes.role = data.role;
	if (data.active !== undefined) changes.active = data.active;
	const roleChanged = data.role !== undefined && data.role !== current.role;
	const now = new Date();
	const subject = `user ${data.name ?? current.name}`;
	db.transaction((tx) => {
		if (Object.keys(changes).length) {
			changes.updatedAt = now;
			tx.update(table.users).set(changes).where(eq(table.users.id, id)).run();
		}
		const entry = (action: Parameters<typeof audit>[1]['action'], detail: Record<string, unknown>) =>
			audit(tx, { actorId, action, subject, detail: { userId: id, ...detail }, at: now });
		if (data.name !== undefined && data.name !== current.name)
			entry('user.updated', { name: { from: current.name, to: data.name } });
		if (roleChanged) entry('user.role-changed', { role: { from: current.role, to: data.role } });
		if (data.active !== undefined && data.active !== current.active)
			entry(data.active ? 'user.reactivated' : 'user.deactivated', {});
		// The password itself never goes into the trail; only that an admin set a new one.
		if (data.password !== undefined) entry('user.password-reset', {});
	});
	if (data.active === false || roleChanged) await endUserSessions(db, id);
	if (data.password !== undefined) await setPassword(db, id, data.password, null);
	return getUser(db, id)!;
}

export const changeRole = (db: Db, id: string, role: Role) => updateUser(db, id, { role });
export const deactivateUser = (db: Db, id: string) => updateUser(db, id, { active: false });
export const reactivateUser = (db: Db, id: string) => updateUser(db, id, { active: true });
