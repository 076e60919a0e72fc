// A model's adjustment notes, saved whole with the version they were edited from
// (`{ version, text }`; 409 when someone saved in between). Answers the notebook.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, json, readJson } from '$lib/server/api';
import { saveModelNotes } from '$lib/server/notebook';
import { modelNotesSaveSchema } from '$lib/schemas/notebook';
import type { RequestHandler } from './$types';

export const PUT: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const body = await readJson(event, modelNotesSaveSchema);
	return json(saveModelNotes(db, event.params.make, event.params.model, body, user.id));
});
