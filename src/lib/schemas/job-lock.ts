// Reopening a signed-off job: the supervisor's reason, shared by the job page's form and the
// JSON API (no server imports).
import { z } from 'zod';

export const REOPEN_REASON_MIN = 3;
export const REOPEN_REASON_MAX = 500;

const reasonRule = `Say why it is reopened, in ${REOPEN_REASON_MIN} to ${REOPEN_REASON_MAX} characters`;

export const reopenSchema = z.object({
	reason: z.string(reasonRule).trim().min(REOPEN_REASON_MIN, reasonRule).max(REOPEN_REASON_MAX, reasonRule)
});
export type ReopenInput = z.infer<typeof reopenSchema>;
