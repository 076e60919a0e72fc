// One job file: its stored bytes (photos without their metadata, stripped at upload), or with
// `?variant=thumb` its thumbnail; DELETE marks it removed (the uploader or a supervisor).
import { z } from 'zod';
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, readQuery, requireSameOrigin } from '$lib/server/api';
import { readJobFile, removeJobFile } from '$lib/server/job-files';
import { appStore } from '$lib/server/app-store';
import type { RequestHandler } from './$types';

const querySchema = z.strictObject({
	variant: z.enum(['full', 'thumb']).default('full'),
	download: z.enum(['1']).optional()
});

/** RFC 6266 / RFC 8187: an ASCII fallback name and the real one percent-encoded. */
function disposition(kind: 'inline' | 'attachment', name: string): string {
	const ascii = name.replace(/[^\x20-\x7e]|["\\]/g, '_');
	return `${kind}; filename="${ascii}"; filename*=UTF-8''${encodeURIComponent(name)}`;
}

export const GET: RequestHandler = endpoint(async (event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'file');
	const { variant, download } = readQuery(event.url, querySchema);
	const { file, bytes, mediaType } = await readJobFile(db, appStore(), id, variant);
	// WAVs are downloaded; photos and PDFs open in the browser unless asked otherwise.
	const kind = download || file.type === 'wav' ? 'attachment' : 'inline';
	return new Response(new Uint8Array(bytes), {
		headers: {
			'content-type': mediaType,
			'content-length': String(bytes.byteLength),
			'content-disposition': disposition(kind, variant === 'thumb' ? `thumb-${file.name}.webp` : file.name),
			'x-content-type-options': 'nosniff',
			etag: `"${variant === 'thumb' ? file.thumbSha256 : file.sha256}"`,
			// Kept out of shared caches and off a shared bench PC's disk after sign-out.
			'cache-control': 'private, no-store'
		}
	});
});

export const DELETE: RequestHandler = endpoint((event) => {
	const user = requireUser(event);
	requireSameOrigin(event);
	const id = idParam(event.params.id, 'file');
	removeJobFile(db, id, user);
	return new Response(null, { status: 204 });
});
