// Display helpers shared by pages: human labels for stored enum values, money from
// integer cents, dates and durations. Pure functions, safe in the browser and on the server.
import {
	JOB_STATUS_LABELS,
	UNIT_CATEGORY_LABELS,
	type JobStatus,
	type UnitCategory
} from '$lib/schemas/enums';

export { JOB_STATUS_LABELS, UNIT_CATEGORY_LABELS, PART_STATE_LABELS, ROLE_LABELS } from '$lib/schemas/enums';

export function statusLabel(status: string): string {
	return JOB_STATUS_LABELS[status as JobStatus] ?? status;
}
export function categoryLabel(category: string): string {
	return UNIT_CATEGORY_LABELS[category as UnitCategory] ?? category;
}

const money = new Intl.NumberFormat('en-US', { minimumFractionDigits: 2, maximumFractionDigits: 2 });

/** Integer cents as a plain amount with two decimals (the shop's currency is a setting, not a symbol here). */
export function formatCents(cents: number): string {
	return money.format(cents / 100);
}

/** A decimal amount typed by a person ("12.5", "12,50") as integer cents; null when it is not one. */
export function parseMoneyToCents(text: string): number | null {
	const t = text.trim().replace(',', '.');
	if (!/^\d+(\.\d{0,2})?$/.test(t)) return null;
	return Math.round(Number(t) * 100);
}

function toDate(value: Date | string | number): Date {
	return value instanceof Date ? value : new Date(value);
}

/** Date and time to the minute, in the viewer's locale-neutral ISO-like form (sorts and reads the same everywhere). */
export function formatDateTime(value: Date | string | number | null | undefined): string {
	if (value === null || value === undefined) return '—';
	const d = toDate(value);
	if (Number.isNaN(d.getTime())) return '—';
	const p = (n: number) => String(n).padStart(2, '0');
	return `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())} ${p(d.getHours())}:${p(d.getMinutes())}`;
}

export function formatDate(value: Date | string | number | null | undefined): string {
	if (value === null || value === undefined || value === '') return '—';
	if (typeof value === 'string' && /^\d{4}-\d{2}-\d{2}$/.test(value)) return value;
	return formatDateTime(value).slice(0, 10);
}

/** Minutes as "1 h 25 min". */
export function formatMinutes(minutes: number): string {
	const h = Math.floor(minutes / 60);
	const m = minutes % 60;
	if (h === 0) return `${m} min`;
	return m === 0 ? `${h} h` : `${h} h ${m} min`;
}
