// Every server entry point is wrapped once, so a DomainError thrown anywhere below it (route
// helpers, services) becomes the right answer in one place: JSON with its status for the API,
// the error page for a load, a form failure (with the action's name) for an action.
import type { RequestEvent } from '@sveltejs/kit';
import { DomainError, errorResponse, toFormFailure, toHttp } from './errors';

const WRAPPED = Symbol('benchlight.wrapped');

function mark<F>(fn: F): F {
	return Object.assign(fn as object, { [WRAPPED]: true }) as F;
}

/** True for a handler, load or action made by these wrappers (the authorization matrix checks). */
export function isWrapped(fn: unknown): boolean {
	return typeof fn === 'function' && (fn as unknown as Record<symbol, unknown>)[WRAPPED] === true;
}

/** An API handler: a DomainError becomes `{ message, issues? }` with its status and headers. */
export function endpoint<E extends RequestEvent>(
	handler: (event: E) => Response | Promise<Response>
): (event: E) => Promise<Response> {
	return mark(async (event: E) => {
		try {
			return await handler(event);
		} catch (e) {
			if (e instanceof DomainError) return errorResponse(e);
			throw e;
		}
	});
}

/** A page load: a DomainError becomes the error page with its status. */
export function pageLoad<E, R>(load: (event: E) => R | Promise<R>): (event: E) => Promise<R> {
	return mark(async (event: E) => {
		try {
			return await load(event);
		} catch (e) {
			return toHttp(e);
		}
	});
}

/**
 * Form actions: a DomainError becomes `fail(status, { action, message, errors })`, so the page
 * shows the refusal beside the form that caused it.
 */
// eslint-disable-next-line @typescript-eslint/no-explicit-any -- each action keeps its own event type
export function formActions<A extends Record<string, (event: any) => unknown>>(actions: A): A {
	const out: Record<string, unknown> = {};
	for (const [name, action] of Object.entries(actions)) {
		out[name] = mark(async (event: unknown) => {
			try {
				return await action(event);
			} catch (e) {
				return toFormFailure(e, name);
			}
		});
	}
	return out as A;
}
