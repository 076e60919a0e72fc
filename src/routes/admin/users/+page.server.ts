// Admin: the shop's accounts. Create, change role, deactivate (their sessions end) and reactivate.
import { fail, isHttpError } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { requireAdmin } from '$lib/server/guards';
import { createUser, isUserId, listUsers, updateUser } from '$lib/server/users';
import { userCreateSchema, userPatchSchema } from '$lib/schemas/users';
import { fieldErrors, text } from '$lib/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = (event) => {
	const me = requireAdmin(event);
	return { users: listUsers(db), meId: me.id };
};

/** Service refusals (409 last admin, 409 e-mail taken, 404) become messages on the page. */
async function serviceCall<T>(action: string, run: () => Promise<T>) {
	try {
		await run();
		return null;
	} catch (e) {
		if (isHttpError(e) && e.status < 500) return fail(e.status, { action, message: e.body.message });
		throw e;
	}
}

function targetId(form: FormData): string | null {
	const id = text(form, 'id');
	return isUserId(id) ? id : null;
}

export const actions: Actions = {
	create: async (event) => {
		requireAdmin(event);
		const form = await event.request.formData();
		const values = { email: text(form, 'email'), name: text(form, 'name'), role: text(form, 'role') };
		const parsed = userCreateSchema.safeParse({ ...values, password: text(form, 'password') });
		if (!parsed.success) return fail(400, { action: 'create', values, errors: fieldErrors(parsed.error) });
		const refused = await serviceCall('create', () => createUser(db, parsed.data));
		if (refused) return fail(refused.status, { ...refused.data, values });
		return { action: 'create', ok: true, message: `Account created for ${parsed.data.name}.` };
	},

	role: async (event) => {
		requireAdmin(event);
		const form = await event.request.formData();
		const id = targetId(form);
		if (!id) return fail(404, { action: 'role', message: 'No such user' });
		const parsed = userPatchSchema.safeParse({ role: text(form, 'role') });
		if (!parsed.success) return fail(400, { action: 'role', message: 'Choose a role' });
		return (
			(await serviceCall('role', () => updateUser(db, id, parsed.data))) ?? {
				action: 'role',
				ok: true,
				message: 'Role changed.'
			}
		);
	},

	active: async (event) => {
		const me = requireAdmin(event);
		const form = await event.request.formData();
		const id = targetId(form);
		if (!id) return fail(404, { action: 'active', message: 'No such user' });
		const active = text(form, 'active') === 'true';
		if (!active && id === me.id)
			return fail(409, { action: 'active', message: 'You cannot deactivate your own account' });
		return (
			(await serviceCall('active', () => updateUser(db, id, { active }))) ?? {
				action: 'active',
				ok: true,
				message: active ? 'Account reactivated.' : 'Account deactivated; its sessions have ended.'
			}
		);
	}
};
