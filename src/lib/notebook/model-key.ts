// One make and model, however it was typed at intake: a stable key for the model notebook.
// Rule: Unicode compatibility-decompose (NFKD), drop combining marks (accents), lower-case, and
// keep only letters and digits. So "Pellowmere  sa-150", "PELLOWMERE SA150" and "Pellowmère SA 150"
// are one model; "SA-150" and "SA-1500" are not. Shared by the server and the intake form.

/** A make or a model as its key: letters and digits only, lower case, accents dropped. */
export function keyPart(text: string): string {
	return text
		.normalize('NFKD')
		.replace(/\p{M}/gu, '')
		.toLowerCase()
		.replace(/[^\p{L}\p{N}]/gu, '');
}

export interface ModelKey {
	make: string;
	model: string;
}

/** The key of a make and model, or null when either has no letter or digit. */
export function modelKeyOf(make: string, model: string): ModelKey | null {
	const k = { make: keyPart(make), model: keyPart(model) };
	return k.make && k.model ? k : null;
}

/** The key as one stored string, `make/model` (neither part can hold a `/`). */
export function modelKeyString(make: string, model: string): string | null {
	const k = modelKeyOf(make, model);
	return k ? `${k.make}/${k.model}` : null;
}

/** The notebook page of a make and model, or null when either is blank. */
export function notebookPath(make: string, model: string): string | null {
	const k = modelKeyOf(make, model);
	return k ? `/models/${encodeURIComponent(k.make)}/${encodeURIComponent(k.model)}` : null;
}
