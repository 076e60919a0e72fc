// Small helpers for form actions (every form in the app is a plain SvelteKit action): read FormData fields as the
// types the zod schemas expect, and turn zod issues into per-field messages for <Field>.
import type { z } from 'zod';

export type FieldErrors = Record<string, string[]>;

/** Zod issues grouped by their first path segment; form-level issues go under `_form`. */
export function fieldErrors(error: z.ZodError): FieldErrors {
	const out: FieldErrors = {};
	for (const issue of error.issues) {
		const key = issue.path.length ? String(issue.path[0]) : '_form';
		(out[key] ??= []).push(issue.message);
	}
	return out;
}

/** A text field ('' when missing or a file). */
export function text(form: FormData, name: string): string {
	const v = form.get(name);
	return typeof v === 'string' ? v : '';
}

/** A text field that means "none" when blank. */
export function optionalText(form: FormData, name: string): string | null {
	const v = text(form, name).trim();
	return v === '' ? null : v;
}

/**
 * A numeric field: undefined when blank (the schema's default applies), NaN when it is not
 * a number (the schema then says "must be a number" beside the field).
 */
export function number(form: FormData, name: string): number | undefined {
	const v = text(form, name).trim().replace(',', '.');
	if (v === '') return undefined;
	return Number(v);
}
