// One model's notebook: past jobs, parts by designator, typical figures, adjustment notes (saved
// whole with the version they were edited from) and documents. Any spelling of make and model in
// the address is sent on to the notebook's own address.
import { redirect } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { formActions, pageLoad } from '$lib/server/handlers';
import { getNotebook, saveModelNotes } from '$lib/server/notebook';
import { getSettings } from '$lib/server/settings';
import { text } from '$lib/forms';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	const user = requireUser(event);
	const notebook = getNotebook(db, event.params.make, event.params.model);
	const [make, model] = notebook.key.split('/');
	if (event.params.make !== make || event.params.model !== model) redirect(308, notebook.path);
	return { notebook, me: user, maxMiB: getSettings(db).jobFiles.maxFileMiB };
});

export const actions: Actions = formActions({
	notes: async (event) => {
		const user = requireUser(event);
		const form = await event.request.formData();
		const values = { version: text(form, 'version'), text: text(form, 'text') };
		saveModelNotes(db, event.params.make, event.params.model, values, user.id);
		return { action: 'notes', ok: true };
	}
});
