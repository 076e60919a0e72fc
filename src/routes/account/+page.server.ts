// Your account: change your own password. Other sessions end; this one stays signed in.
import { fail } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { changePassword } from '$lib/server/auth';
import { requireUser } from '$lib/server/guards';
import { passwordChangeSchema } from '$lib/schemas/users';
import { pageLoad, formActions } from '$lib/server/handlers';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	const user = requireUser(event);
	return { account: user };
});

type FieldErrors = Partial<Record<'currentPassword' | 'newPassword' | 'confirmPassword', string[]>>;

export const actions: Actions = formActions({
	password: async (event) => {
		const user = requireUser(event);
		const form = await event.request.formData();
		const parsed = passwordChangeSchema.safeParse({
			currentPassword: form.get('currentPassword') ?? '',
			newPassword: form.get('newPassword') ?? '',
			confirmPassword: form.get('confirmPassword') ?? ''
		});
		if (!parsed.success) {
			const errors: FieldErrors = {};
			for (const issue of parsed.error.issues) {
				const key = String(issue.path[0] ?? 'newPassword') as keyof FieldErrors;
				(errors[key] ??= []).push(issue.message);
			}
			return fail(400, { errors, done: false });
		}
		const result = await changePassword(
			db,
			user.id,
			parsed.data.currentPassword,
			parsed.data.newPassword,
			event.locals.session?.id ?? null
		);
		if (!result.ok) {
			const errors: FieldErrors = { currentPassword: ['That is not your current password'] };
			return fail(400, { errors, done: false });
		}
		return { errors: {} as FieldErrors, done: true };
	}
});
