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

const newPassword = contractPassword.max(72, 'Passwords are at most 72 characters');

export const signUpFormSchema = z.object({
  name: z.string().trim().min(1, 'Enter your name').max(120, 'Names are at most 120 characters'),
  email: emailField,
  password: newPassword,
  teamName: z.string().trim().min(1, 'Name your team').max(120, 'Team names are at most 120 characters'),
});
export type SignUpFormValues = z.input<typeof signUpFormSchema>;

export const forgotPasswordFormSchema = z.object({ email: emailField });
export type ForgotPasswordFormValues = z.input<typeof forgotPasswordFormSchema>;

export const resetPasswordFormSchema = z
  .object({ password: newPassword, confirm: z.string().min(1, 'Repeat the new password') })
  .refine((values) => values.password === values.confirm, { path: ['confirm'], message: 'The two passwords differ' });
export type ResetPasswordFormValues = z.input<typeof resetPasswordFormSchema>;
