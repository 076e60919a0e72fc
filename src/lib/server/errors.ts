// One way for the server to fail: services throw a DomainError with a code; routes, loads and
// actions turn it into an HTTP answer through the one code→status table below.
import { error, fail, type ActionFailure } from '@sveltejs/kit';

/** What went wrong, in the server's own words; each maps to exactly one HTTP status. */
export const ERROR_STATUS = {
	/** The input is malformed or breaks a rule; `issues` names each problem. */
	invalid: 400,
	/** Not signed in, or a re-entered password is wrong. */
	unauthenticated: 401,
	/** Signed in, but the role may not do this. */
	forbidden: 403,
	'not-found': 404,
	'method-not-allowed': 405,
	/** The request clashes with the record's state (already running, locked, name taken …). */
	conflict: 409,
	'too-large': 413,
	'unsupported-type': 415,
	'too-many-requests': 429,
	/** The server is busy; try again after `Retry-After`. */
	busy: 503
} as const;
export type ErrorCode = keyof typeof ERROR_STATUS;

export interface Issue {
	/** Where in the input, dotted (`meta.analysis.fftSize`); empty for the whole input. */
	path: string;
	message: string;
}

export class DomainError extends Error {
	constructor(
		readonly code: ErrorCode,
		message: string,
		readonly issues?: Issue[],
		/** Extra answer headers, e.g. Retry-After for `busy`. */
		readonly headers?: Record<string, string>
	) {
		super(message);
		this.name = 'DomainError';
	}

	get status(): number {
		return ERROR_STATUS[this.code];
	}

	/** The JSON body every error answer has: `{ message, issues? }`. */
	get body(): { message: string; issues?: Issue[] } {
		return this.issues?.length ? { message: this.message, issues: this.issues } : { message: this.message };
	}
}

export function isDomainError(e: unknown): e is DomainError {
	return e instanceof DomainError;
}

/** A DomainError as an HTTP answer (JSON body, its status and headers). */
export function errorResponse(e: DomainError): Response {
	return new Response(JSON.stringify(e.body), {
		status: e.status,
		headers: { 'content-type': 'application/json', ...e.headers }
	});
}

/** For page loads: a DomainError becomes SvelteKit's error page with its status; anything else is rethrown. */
export function toHttp(e: unknown): never {
	if (e instanceof DomainError) error(e.status, e.body);
	throw e;
}

export interface FormRefusal {
	/** The action that was refused, so the page shows the message beside its form. */
	action?: string;
	message: string;
	issues?: Issue[];
	/** The issues by field, for forms that show messages under each input. */
	errors: Record<string, string[]>;
}

/** For form actions: a DomainError becomes a form failure with its status and message; anything else is rethrown. */
export function toFormFailure(e: unknown, action?: string): ActionFailure<FormRefusal> {
	if (!(e instanceof DomainError)) throw e;
	const errors: Record<string, string[]> = {};
	for (const i of e.issues ?? []) (errors[i.path || '_form'] ??= []).push(i.message);
	return fail(e.status, { ...(action ? { action } : {}), ...e.body, errors });
}
