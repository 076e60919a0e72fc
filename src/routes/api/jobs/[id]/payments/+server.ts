// A job's money (GET: total, deposit, received, balance, payments) and counter entries by staff
// (POST: a cash, card-terminal or bank-transfer payment, or a refund by a supervisor).
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { moneySummary, recordCounterPayment } from '$lib/server/payments';
import { counterPaymentSchema } from '$lib/schemas/estimates';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	return json(moneySummary(db, idParam(event.params.id, 'job')));
});

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	const input = await readJson(event, counterPaymentSchema);
	return json(await recordCounterPayment(db, jobId, input, user), { status: 201 });
});
