// The audit trail for supervisors and admins: filters `actor`, `action` (a name or a group such
// as `part.`), `job`, `from`/`to` (calendar days, UTC), newest first, `page`/`pageSize`.
import { db } from '$lib/server/db';
import { requireSupervisor } from '$lib/server/guards';
import { endpoint, json, readQuery } from '$lib/server/api';
import { listAudit } from '$lib/server/audit';
import { auditQuerySchema } from '$lib/schemas/audit';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireSupervisor(event);
	const query = readQuery(event.url, auditQuerySchema);
	return json(listAudit(db, query));
});
