// Change one's own password: the current one must be right; other sessions end, this one stays.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { badRequest, endpoint, json, readJson } from '$lib/server/api';
import { changePassword } from '$lib/server/auth';
import { passwordChangeSchema } from '$lib/schemas/users';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const input = await readJson(event, passwordChangeSchema);
	const result = await changePassword(
		db,
		user.id,
		input.currentPassword,
		input.newPassword,
		event.locals.session?.id ?? null
	);
	if (!result.ok) {
		badRequest('Password not changed', [
			{ path: 'currentPassword', message: 'That is not your current password' }
		]);
	}
	return json({ ok: true });
});
