// Validation for services and routes alike: bad input becomes a DomainError('invalid') that
// lists every zod issue at once (answered as a 400), never a ZodError that would be a 500.
import type { z } from 'zod';
import { DomainError, type Issue } from './errors';

/** Zod issues in a compact, stable form for 400 answers. */
export function formatIssues(err: z.ZodError): Issue[] {
	return err.issues.map((i) => ({ path: i.path.join('.'), message: i.message }));
}

/** A 400 naming what is wrong. */
export function badRequest(message: string, issues?: Issue[]): never {
	throw new DomainError('invalid', message, issues);
}

export function validate<S extends z.ZodType>(
	schema: S,
	input: unknown,
	message = 'Invalid input'
): z.infer<S> {
	const parsed = schema.safeParse(input);
	if (!parsed.success) badRequest(message, formatIssues(parsed.error));
	return parsed.data;
}

/** Like validate, with every problem spelled out in the message itself (for pages that show one line). */
export function validateListing<S extends z.ZodType>(schema: S, input: unknown): z.infer<S> {
	const parsed = schema.safeParse(input);
	if (!parsed.success) {
		const issues = formatIssues(parsed.error);
		badRequest(issues.map((i) => i.message).join('; '), issues);
	}
	return parsed.data;
}
