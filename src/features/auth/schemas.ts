import { z } from 'zod';
import { password as contractPassword } from '../../../server/contracts';

// Form schemas mirror the API contract but speak to the person at the keyboard; the server checks again.
const emailField = z
  .string()
  .trim()
  .toLowerCase()
  .min(1, 'Enter your e-mail address')
  .max(254, 'E-mail addresses are at most 254 characters')
  .pipe(z.email('Enter a valid e-mail address, such as name@example.com'));

export const signInFormSchema = z.object({
  email: emailField,
  password: z.string().min(1, 'Enter your password').max(200),
});
export type SignInFormValues = z.input<typeof signInFormSchema>;

// The contract's rule (at least 10 characters, at most 72 bytes in UTF-8), so the form and the server agree.
const newPassword = contractPassword;
const nameField = z.string().trim().min(1, 'Enter your name').max(120, 'Names are at most 120 characters');
const teamNameField = z.string().trim().min(1, 'Name your team').max(120, 'Team names are at most 120 characters');

/** Sign-up starts with the address alone: the rest is asked on the page the mailed link opens. */
export const signUpFormSchema = z.object({ email: emailField });
export type SignUpFormValues = z.input<typeof signUpFormSchema>;

export const finishSignUpFormSchema = z
  .object({ name: nameField, password: newPassword, confirm: z.string().min(1, 'Repeat the password'), teamName: teamNameField })
  .refine((values) => values.password === values.confirm, { path: ['confirm'], message: 'The two passwords differ' });
export type FinishSignUpFormValues = z.input<typeof finishSignUpFormSchema>;

export const changePasswordFormSchema = z
  .object({
    currentPassword: z.string().min(1, 'Enter your current password').max(200),
    newPassword,
    confirm: z.string().min(1, 'Repeat the new password'),
  })
  .refine((values) => values.newPassword === values.confirm, { path: ['confirm'], message: 'The two passwords differ' })
  .refine((values) => values.newPassword !== values.currentPassword, { path: ['newPassword'], message: 'The new password must differ from the current one' });
export type ChangePasswordFormValues = z.input<typeof changePasswordFormSchema>;

export const forgotPasswordFormSchema = z.object({ email: emailField });
export type ForgotPasswordFormValues = z.input<typeof forgotPasswordFormSchema>;

export const resetPasswordFormSchema = z
  .object({ password: newPassword, confirm: z.string().min(1, 'Repeat the new password') })
  .refine((values) => values.password === values.confirm, { path: ['confirm'], message: 'The two passwords differ' });
export type ResetPasswordFormValues = z.input<typeof resetPasswordFormSchema>;
