// Sign a job awaiting sign-off: `{ decision: 'approve' | 'send-back', comment, password }` → 201
// with the signature. 403 for a technician (and for the four-eyes rule), 409 when the job is not
// awaiting sign-off or an approval's requirements are missing (listed), 401 for a wrong password
// (counted like a failed sign-in), 429 after too many.
import { db } from '$lib/server/db';
import { requireSupervisor } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { clientAddress } from '$lib/server/auth';
import { signOffJob } from '$lib/server/sign-off';
import { signOffInputSchema } from '$lib/schemas/sign-off';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireSupervisor(event);
	const id = idParam(event.params.id, 'job');
	const input = await readJson(event, signOffInputSchema);
	return json(await signOffJob(db, id, input, user, clientAddress(event)), { status: 201 });
});
