// A supervisor sends a drafted estimate to the customer: e-mail with a private link, the version
// frozen with its fingerprint, the job awaiting the customer. The link comes back once.
import { z } from 'zod';
import { db } from '$lib/server/db';
import { requireSupervisor } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { env } from '$lib/server/env';
import { sendEstimate } from '$lib/server/estimates';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireSupervisor(event);
	const id = idParam(event.params.id, 'estimate');
	await readJson(event, z.object({}).strict());
	return json(await sendEstimate(db, id, user, { origin: env.ORIGIN ?? event.url.origin }));
});
