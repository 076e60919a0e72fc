// Where to go after signing in: a same-site path taken from ?next=, never anywhere else.

/**
 * Only same-origin paths may follow sign-in. Resolving against a fixed base catches every trick
 * a browser would follow off-site ("//host", "/\\host", tabs or newlines inside the path).
 */
export function safeNext(value: FormDataEntryValue | string | null): string {
	const s = typeof value === 'string' ? value : '';
	if (!s.startsWith('/')) return '/jobs';
	const base = 'http://benchlight.invalid';
	let u: URL;
	try {
		u = new URL(s, base);
	} catch {
		return '/jobs';
	}
	if (u.origin !== base || u.pathname.startsWith('/login')) return '/jobs';
	return u.pathname + u.search + u.hash;
}
