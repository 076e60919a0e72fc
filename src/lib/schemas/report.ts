// The customer report's shop settings: contact lines, the notes the shop puts on every report,
// and how long a private link lives. Shared by the server and the admin settings form.
import { z } from 'zod';

export const reportSettingsSchema = z.object({
	address: z.string().trim().max(300, 'The address is at most 300 characters'),
	phone: z.string().trim().max(60, 'The phone number is at most 60 characters'),
	email: z.string().trim().max(200, 'The e-mail address is at most 200 characters'),
	/** The shop's warranty terms in its own words. */
	warrantyNote: z.string().trim().max(2000, 'The warranty note is at most 2000 characters'),
	/** Safety advice for the customer (ventilation, mains cord, speakers). */
	safetyNote: z.string().trim().max(2000, 'The safety note is at most 2000 characters'),
	footer: z.string().trim().max(500, 'The footer is at most 500 characters'),
	linkLifetimeDays: z
		.number('Link lifetime is a number of days')
		.int('Link lifetime is a whole number of days')
		.min(1, 'A link lives at least 1 day')
		.max(365, 'A link lives at most 365 days'),
	/** Let a supervisor send a report before the job is signed off (marked "not yet signed off"). */
	allowDraftSend: z.boolean()
});
export type ReportSettings = z.infer<typeof reportSettingsSchema>;

export const DEFAULT_REPORT_SETTINGS: ReportSettings = {
	address: '',
	phone: '',
	email: '',
	warrantyNote:
		'The work and the parts listed above are guaranteed for six months from the day the unit is returned. The shop sets this text in its settings.',
	safetyNote:
		'Give the unit room to breathe: keep its vents clear and do not stack other equipment on it. Connect speakers only while it is switched off, and have any damage to the mains cord repaired by a qualified person.',
	footer: '',
	linkLifetimeDays: 90,
	allowDraftSend: false
};
