// Admin: the shop's accounts. Create, change role, deactivate (their sessions end) and reactivate.
import { fail } from '@sveltejs/kit';
import { isDomainError, toFormFailure } from '$lib/server/errors';
import { db } from '$lib/server/db';
import { requireAdmin } from '$lib/server/guards';
import { createUser, isUserId, listUsers, updateUser } from '$lib/server/users';
import { userCreateSchema, userPatchSchema } from '$lib/schemas/users';
import { fieldErrors, text } from '$lib/forms';
import { pageLoad, formActions } from '$lib/server/handlers';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	const me = requireAdmin(event);
	return { users: listUsers(db), meId: me.id };
});

function targetId(form: FormData): string | null {
	const id = text(form, 'id');
	return isUserId(id) ? id : null;
}

export const actions: Actions = formActions({
	create: async (event) => {
		const admin = requireAdmin(event);
		const form = await event.request.formData();
		const values = { email: text(form, 'email'), name: text(form, 'name'), role: text(form, 'role') };
		const parsed = userCreateSchema.safeParse({ ...values, password: text(form, 'password') });
		if (!parsed.success) return fail(400, { action: 'create', values, errors: fieldErrors(parsed.error) });
		try {
			await createUser(db, parsed.data, admin.id);
		} catch (e) {
			// Keep what was typed (but the password) when the service refuses, e.g. an e-mail in use.
			if (!isDomainError(e)) throw e;
			const refused = toFormFailure(e, 'create');
			return fail(refused.status, { ...refused.data, values });
		}
		return { action: 'create', ok: true, message: `Account created for ${parsed.data.name}.` };
	},

	role: async (event) => {
		const admin = requireAdmin(event);
		const form = await event.request.formData();
		const id = targetId(form);
		if (!id) return fail(404, { action: 'role', message: 'No such user' });
		const parsed = userPatchSchema.safeParse({ role: text(form, 'role') });
		if (!parsed.success) return fail(400, { action: 'role', message: 'Choose a role' });
		await updateUser(db, id, parsed.data, admin.id);
		return {
			action: 'role',
			ok: true,
			message: 'Role changed; their sessions have ended, so they sign in again.'
		};
	},

	active: async (event) => {
		const me = requireAdmin(event);
		const form = await event.request.formData();
		const id = targetId(form);
		if (!id) return fail(404, { action: 'active', message: 'No such user' });
		const active = text(form, 'active') === 'true';
		if (!active && id === me.id)
			return fail(409, { action: 'active', message: 'You cannot deactivate your own account' });
		await updateUser(db, id, { active }, me.id);
		return {
			action: 'active',
			ok: true,
			message: active ? 'Account reactivated.' : 'Account deactivated; its sessions have ended.'
		};
	}
});
