// Estimates, the customer's decision and counter payments: the shapes every boundary checks
// (the job's estimate form, the API, the customer's private link). Shared by server and browser.
import { z } from 'zod';

const description = z
	.string('Each line needs a description')
	.trim()
	.min(1, 'Each line needs a description')
	.max(200, 'A line description is at most 200 characters');
const minor = (what: string, max = 100_000_000) =>
	z
		.number(`${what} is an amount in minor units (cents)`)
		.int(`${what} is a whole number of minor units (cents)`)
		.min(0, `${what} cannot be negative`)
		.max(max, `${what} is at most ${max} minor units`);

export const estimateLineSchema = z.discriminatedUnion(
	'kind',
	[
		z.object({
			kind: z.literal('labour'),
			description,
			durationMinutes: z
				.number('Labour time is a number of minutes')
				.int('Labour time is a whole number of minutes')
				.min(1, 'Labour time is at least 1 minute')
				.max(60 * 200, 'Labour time is at most 200 hours per line')
		}),
		z.object({
			kind: z.literal('part'),
			description,
			partId: z.number().int().positive().nullable(),
			quantity: z.number('Quantity is a number').int('Quantity is a whole number').min(1).max(1000),
			unitCostMinor: minor('Unit cost')
		}),
		z.object({
			kind: z.literal('fixed'),
			description,
			quantity: z.number('Quantity is a number').int('Quantity is a whole number').min(1).max(1000),
			unitPriceMinor: minor('Unit price')
		}),
		z.object({ kind: z.literal('fee'), description, amountMinor: minor('Fee') })
	],
	'Each line is labour, part, fixed or fee'
);
export type EstimateLineDraft = z.infer<typeof estimateLineSchema>;

export const estimateDraftSchema = z.object({
	lines: z
		.array(estimateLineSchema)
		.min(1, 'An estimate needs at least one line')
		.max(100, 'An estimate has at most 100 lines'),
	note: z
		.string()
		.trim()
		.max(2000, 'The note to the customer is at most 2000 characters')
		.nullable()
		.optional()
});
export type EstimateDraftInput = z.infer<typeof estimateDraftSchema>;

const sha256 = z
	.string('The page was missing the estimate it showed; reload the page')
	.regex(/^[0-9a-f]{64}$/, 'The page was missing the estimate it showed; reload the page');

export const estimateDecisionSchema = z.discriminatedUnion(
	'decision',
	[
		z.object({
			decision: z.literal('approve'),
			typedName: z
				.string('Type your name to approve')
				.trim()
				.min(2, 'Type your name to approve (at least 2 characters)')
				.max(120, 'Your name is at most 120 characters'),
			consent: z.literal(true, 'Tick the box to agree to the estimate'),
			seenSha256: sha256
		}),
		z.object({
			decision: z.literal('decline'),
			typedName: z.string().trim().max(120, 'Your name is at most 120 characters').optional(),
			reason: z
				.string('Tell the shop why, in a few words')
				.trim()
				.min(3, 'Tell the shop why, in a few words (at least 3 characters)')
				.max(1000, 'The reason is at most 1000 characters'),
			seenSha256: sha256
		})
	],
	'Choose approve or decline'
);
export type EstimateDecisionInput = z.infer<typeof estimateDecisionSchema>;

export const COUNTER_METHODS = ['cash', 'card-terminal', 'bank-transfer'] as const;
export const PAYMENT_METHOD_LABELS: Record<string, string> = {
	online: 'Online checkout',
	cash: 'Cash',
	'card-terminal': 'Card terminal',
	'bank-transfer': 'Bank transfer'
};

export const counterPaymentSchema = z.object({
	kind: z.enum(['payment', 'refund'], 'A counter entry is a payment or a refund'),
	method: z.enum(COUNTER_METHODS, `The method is one of ${COUNTER_METHODS.join(', ')}`),
	amountMinor: minor('The amount').refine((n) => n >= 1, 'The amount must be more than zero'),
	reference: z.string().trim().max(120, 'The reference is at most 120 characters').nullable().optional()
});
export type CounterPaymentInput = z.infer<typeof counterPaymentSchema>;

export const ESTIMATE_STATUS_LABELS: Record<string, string> = {
	draft: 'Draft',
	sent: 'Sent, awaiting the customer',
	approved: 'Approved by the customer',
	declined: 'Declined by the customer',
	superseded: 'Superseded by a later version'
};
