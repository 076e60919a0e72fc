// Zod schemas for accounts: sign-in, user management and password change. Shared by the
// server and the browser's forms (no server imports).
import { z } from 'zod';
import { ROLES } from './enums';

/** ASVS 4.0 V2.1.1/V2.1.2: at least 12 characters, and long passphrases (up to 128) allowed. */
export const PASSWORD_MIN_LENGTH = 12;
export const PASSWORD_MAX_LENGTH = 128;

export const emailSchema = z
	.string()
	.trim()
	.toLowerCase()
	.min(1, 'Enter an e-mail address')
	.max(254)
	.check(z.email('Enter a valid e-mail address'));

export const personNameSchema = z
	.string()
	.trim()
	.min(1, 'Enter a name')
	.max(100, 'At most 100 characters')
	.refine(
		(s) => ![...s].some((c) => c.charCodeAt(0) < 0x20 || c.charCodeAt(0) === 0x7f || c === '<' || c === '>'),
		'No control characters or angle brackets'
	);

export const newPasswordSchema = z
	.string()
	.min(PASSWORD_MIN_LENGTH, `At least ${PASSWORD_MIN_LENGTH} characters`)
	.max(PASSWORD_MAX_LENGTH, `At most ${PASSWORD_MAX_LENGTH} characters`);

/** The sign-in form. Lengths only: the failure text must not say which field was wrong. */
export const signInSchema = z.object({
	email: z.string().trim().toLowerCase().min(1, 'Enter your e-mail address').max(254),
	password: z.string().min(1, 'Enter your password').max(1024)
});
export type SignInInput = z.infer<typeof signInSchema>;

export const userCreateSchema = z.object({
	email: emailSchema,
	name: personNameSchema,
	role: z.enum(ROLES, 'Choose a role'),
	password: newPasswordSchema
});
export type UserCreate = z.infer<typeof userCreateSchema>;

/** Admin edits: rename, change role, deactivate/reactivate, or set a new password. */
export const userPatchSchema = z
	.object({
		name: personNameSchema,
		role: z.enum(ROLES, 'Choose a role'),
		active: z.boolean(),
		password: newPasswordSchema
	})
	.partial()
	.strict()
	.refine((v) => Object.keys(v).length > 0, 'Nothing to change');
export type UserPatch = z.infer<typeof userPatchSchema>;

/** Change one's own password. `confirmPassword` is optional for API callers. */
export const passwordChangeSchema = z
	.object({
		currentPassword: z.string().min(1, 'Enter your current password').max(1024),
		newPassword: newPasswordSchema,
		confirmPassword: z.string().max(1024).optional()
	})
	.superRefine((v, ctx) => {
		if (v.confirmPassword !== undefined && v.confirmPassword !== v.newPassword) {
			ctx.addIssue({ code: 'custom', path: ['confirmPassword'], message: 'The two new passwords differ' });
		}
		if (v.newPassword === v.currentPassword) {
			ctx.addIssue({
				code: 'custom',
				path: ['newPassword'],
				message: 'Choose a password you are not using now'
			});
		}
	});
export type PasswordChange = z.infer<typeof passwordChangeSchema>;
