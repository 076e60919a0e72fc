// One bench worksheet of a job (intake, power-up, bias, safety): GET reads it with its version;
// PUT saves the whole sheet, sending back the version it was edited from (409 when stale).
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { DomainError } from '$lib/server/errors';
import { getWorksheet, saveWorksheet } from '$lib/server/worksheets';
import { WORKSHEET_KINDS, worksheetKindSchema, worksheetPutSchema } from '$lib/schemas/worksheets';
import type { RequestHandler } from './$types';

function kindParam(value: string) {
	const parsed = worksheetKindSchema.safeParse(value);
	if (!parsed.success)
		throw new DomainError('not-found', `No such worksheet: use one of ${WORKSHEET_KINDS.join(', ')}`);
	return parsed.data;
}

export const GET: RequestHandler = endpoint(async (event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'job');
	return json(getWorksheet(db, id, kindParam(event.params.kind)));
});

export const PUT: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'job');
	const kind = kindParam(event.params.kind);
	const body = await readJson(event, worksheetPutSchema);
	return json(saveWorksheet(db, id, kind, body, user.id));
});
