// A one-line reading of an audit entry's detail for lists (the JSON stays at the API).
import { JOB_STATUS_LABELS, type JobStatus } from './schemas/enums';

const status = (s: unknown) => (typeof s === 'string' ? (JOB_STATUS_LABELS[s as JobStatus] ?? s) : '—');
const short = (v: unknown, max = 80) => {
	const text = typeof v === 'string' ? v : JSON.stringify(v);
	return text.length > max ? `${text.slice(0, max - 1)}…` : text;
};

export function auditDetailText(action: string, detail: unknown): string {
	if (!detail || typeof detail !== 'object') return '';
	const d = detail as Record<string, unknown>;
	switch (action) {
		case 'job.status-changed':
			return `${status(d.from)} → ${status(d.to)}${d.note ? ` · ${short(d.note)}` : ''}`;
		case 'job.reopened':
			return `${status(d.from)} → ${status(d.to)} · ${short(d.reason)}`;
		case 'sign-off.approved':
		case 'sign-off.sent-back':
			return `“${d.meaning}”${d.comment ? ` · ${short(d.comment)}` : ''}${d.selfSignOff ? ' · self sign-off (allowed by shop setting)' : ''} · SHA-256 ${String(d.sha256 ?? '').slice(0, 12)}…`;
		case 'sign-off.superseded':
			return `sign-off #${d.signOffId} · ${short(d.reason)}`;
		case 'log.added':
			return `${short(d.text)}${d.minutes ? ` · ${d.minutes} min` : ''}`;
		case 'part.added':
		case 'part.removed':
			return `${d.refDes} · ${short(d.description, 40)}${d.value ? ` · ${d.value}` : ''} · ${d.state}`;
		case 'file.uploaded':
			return `${String(d.type ?? '').toUpperCase()} · ${typeof d.bytes === 'number' ? `${(d.bytes / 1024).toFixed(0)} KiB` : ''} · SHA-256 ${String(d.sha256 ?? '').slice(0, 12)}…`;
		case 'file.removed':
			return `SHA-256 ${String(d.sha256 ?? '').slice(0, 12)}… (kept in the store)`;
		default: {
			// Changed fields as "field: from → to".
			const parts = Object.entries(d)
				.filter(([, v]) => v && typeof v === 'object' && 'from' in (v as object) && 'to' in (v as object))
				.map(([k, v]) => {
					const c = v as { from: unknown; to: unknown };
					return `${k}: ${short(c.from, 30)} → ${short(c.to, 30)}`;
				});
			return parts.join(' · ');
		}
	}
}
