// Your account: change your own password. Other sessions end; this one stays signed in. A new
// password that is too easy to guess comes back beside its field (the service's 400); wrong
// guesses of the current one are slowed (429).
import { fail } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { changePassword, waitText } from '$lib/server/auth';
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
		if (!result.ok && result.reason === 'rate-limited') {
			event.setHeaders({ 'retry-after': String(result.retryAfterS) });
			const errors: FieldErrors = {
				currentPassword: [
					`Too many wrong guesses of your current password. Wait ${waitText(result.retryAfterS)} and try again.`
				]
			};
			return fail(429, { errors, done: false });
		}
		if (!result.ok) {
			const errors: FieldErrors = { currentPassword: ['That is not your current password'] };
			return fail(400, { errors, done: false });
		}
		return { errors: {} as FieldErrors, done: true };
	}
});
