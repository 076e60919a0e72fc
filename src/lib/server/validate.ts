// Service-side validation: a service called with bad input answers 400 with the zod issues,
// the same as a route would, instead of letting a ZodError become a 500.
import type { z } from 'zod';
import { badRequest, formatIssues } from './api';

export function validate<S extends z.ZodType>(
	schema: S,
	input: unknown,
	message = 'Invalid input'
): z.infer<S> {
	const parsed = schema.safeParse(input);
	if (!parsed.success) badRequest(message, formatIssues(parsed.error));
	return parsed.data;
}
