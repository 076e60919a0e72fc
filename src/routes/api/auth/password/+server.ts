// Change one's own password: the current one must be right; other sessions end, this one stays.
// 400 names the field (wrong current password, or a new one too easy to guess); repeated wrong
// guesses answer 429 with Retry-After.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { badRequest, endpoint, json, readJson } from '$lib/server/api';
import { changePassword, waitText } from '$lib/server/auth';
import { DomainError } from '$lib/server/errors';
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
	if (!result.ok && result.reason === 'rate-limited') {
		throw new DomainError(
			'too-many-requests',
			`Too many wrong guesses of your current password. Wait ${waitText(result.retryAfterS)} and try again.`,
			undefined,
			{ 'retry-after': String(result.retryAfterS) }
		);
	}
	if (!result.ok) {
		badRequest('Password not changed', [
			{ path: 'currentPassword', message: 'That is not your current password' }
		]);
	}
	return json({ ok: true });
});
