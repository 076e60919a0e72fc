// The audit trail's action names and labels, and the query the /audit page and GET /api/audit
// share. No server imports: the page's filter form uses these too.
import { z } from 'zod';

/** Every action the trail records. Stored as text; add new names at the end. */
export const AUDIT_ACTIONS = [
	'job.created',
	'job.updated',
	'job.status-changed',
	'job.reopened',
	'log.added',
	'part.added',
	'part.updated',
	'part.removed',
	'sign-off.approved',
	'sign-off.sent-back',
	'sign-off.superseded',
	'snapshot.captured',
	'soak.started',
	'soak.ended',
	'limit-profile.created',
	'limit-profile.updated',
	'limit-profile.archived',
	'limit-profile.deleted',
	'settings.changed',
	'user.created',
	'user.updated',
	'user.role-changed',
	'user.deactivated',
	'user.reactivated',
	'user.password-reset',
	'procedure.recorded',
	'worksheet.created',
	'worksheet.updated',
	'file.uploaded',
	'file.removed',
	'customer-link.created',
	'customer-link.revoked',
	'report.sent',
	'estimate.drafted',
	'estimate.sent',
	'estimate.approved',
	'estimate.declined',
	'payment.checkout-started',
	'payment.received',
	'payment.checkout-expired',
	'payment.recorded',
	'payment.refunded',
	'payment.event-refused',
	'invoice.issued',
	'model-notes.saved'
] as const;
export type AuditAction = (typeof AUDIT_ACTIONS)[number];

export const AUDIT_ACTION_LABELS: Record<AuditAction, string> = {
	'job.created': 'Job taken in',
	'job.updated': 'Job details edited',
	'job.status-changed': 'Status changed',
	'job.reopened': 'Job reopened',
	'log.added': 'Work log entry added',
	'part.added': 'Part added',
	'part.updated': 'Part changed',
	'part.removed': 'Part removed',
	'sign-off.approved': 'Signed off',
	'sign-off.sent-back': 'Sent back',
	'sign-off.superseded': 'Sign-off superseded',
	'snapshot.captured': 'Snapshot captured',
	'soak.started': 'Soak run started',
	'soak.ended': 'Soak run ended',
	'limit-profile.created': 'Limit profile created',
	'limit-profile.updated': 'Limit profile changed',
	'limit-profile.archived': 'Limit profile archived',
	'limit-profile.deleted': 'Limit profile deleted',
	'settings.changed': 'Shop settings changed',
	'user.created': 'User created',
	'user.updated': 'User renamed',
	'user.role-changed': 'Role changed',
	'user.deactivated': 'User deactivated',
	'user.reactivated': 'User reactivated',
	'user.password-reset': 'Password reset by an admin',
	'procedure.recorded': 'Bench procedure recorded',
	'worksheet.created': 'Worksheet started',
	'worksheet.updated': 'Worksheet changed',
	'file.uploaded': 'File attached',
	'file.removed': 'File removed',
	'customer-link.created': 'Customer link made',
	'customer-link.revoked': 'Customer link revoked',
	'report.sent': 'Report sent to the customer',
	'estimate.drafted': 'Estimate drafted',
	'estimate.sent': 'Estimate sent to the customer',
	'estimate.approved': 'Estimate approved by the customer',
	'estimate.declined': 'Estimate declined by the customer',
	'payment.checkout-started': 'Online payment started',
	'payment.received': 'Online payment received',
	'payment.checkout-expired': 'Online payment not completed',
	'payment.recorded': 'Payment recorded at the counter',
	'payment.refunded': 'Refund recorded',
	'payment.event-refused': 'Payment event refused',
	'invoice.issued': 'Invoice issued',
	'model-notes.saved': 'Model adjustment notes saved'
};

export function auditActionLabel(action: string): string {
	return AUDIT_ACTION_LABELS[action as AuditAction] ?? action;
}

export const AUDIT_PAGE_SIZE_MAX = 200;

/** An empty query-string value means "no filter". */
const blank = (v: unknown) => (v === '' ? undefined : v);

const isoDate = z
	.string()
	.regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a date like 2026-03-31')
	.refine((s) => {
		const d = new Date(`${s}T00:00:00Z`);
		return !Number.isNaN(d.getTime()) && d.toISOString().slice(0, 10) === s;
	}, 'Not a real calendar date');

/**
 * GET /api/audit and the /audit page: `actor` a user id, `action` one action name (or a prefix
 * ending in `.` such as `part.`), `job` a job number, `from`/`to` calendar days (UTC, inclusive),
 * newest first, `page` from 1.
 */
export const auditQuerySchema = z
	.object({
		actor: z.preprocess(blank, z.string().trim().max(64).optional()),
		action: z.preprocess(
			blank,
			z
				.string()
				.trim()
				.max(60)
				.refine(
					(s) =>
						(AUDIT_ACTIONS as readonly string[]).includes(s) ||
						(s.endsWith('.') && AUDIT_ACTIONS.some((a) => a.startsWith(s))),
					`Use one of ${AUDIT_ACTIONS.join(', ')}, or a group such as part.`
				)
				.optional()
		),
		job: z.preprocess(
			(v) => (typeof v === 'string' ? blank(v.replace(/^#/, '')) : v),
			z.coerce.number('Job is a job number, like 42').int().min(1).max(1e12).optional()
		),
		from: z.preprocess(blank, isoDate.optional()),
		to: z.preprocess(blank, isoDate.optional()),
		page: z.preprocess(blank, z.coerce.number().int().min(1).max(1_000_000).default(1)),
		pageSize: z.preprocess(
			blank,
			z.coerce
				.number()
				.int()
				.min(1)
				.max(AUDIT_PAGE_SIZE_MAX, `pageSize is at most ${AUDIT_PAGE_SIZE_MAX}`)
				.default(50)
		)
	})
	.refine((q) => !q.from || !q.to || q.from <= q.to, {
		path: ['to'],
		message: 'The end date is before the start date'
	});
export type AuditQuery = z.infer<typeof auditQuerySchema>;

/** One row of the trail as the page and API show it. */
export interface AuditEntryView {
	id: number;
	at: string;
	actorId: string | null;
	actorName: string | null;
	action: string;
	jobId: number | null;
	subject: string;
	detail: unknown;
}

export interface AuditPage {
	items: AuditEntryView[];
	total: number;
	page: number;
	pageSize: number;
}
