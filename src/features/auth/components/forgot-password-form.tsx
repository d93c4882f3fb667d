import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import type { z } from 'zod';
import { messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useRequestPasswordReset } from '../api/request-password-reset';
import { forgotPasswordFormSchema, type ForgotPasswordFormValues } from '../schemas';

export function ForgotPasswordForm() {
  const request = useRequestPasswordReset();
  const form = useForm<ForgotPasswordFormValues, unknown, z.output<typeof forgotPasswordFormSchema>>({
    resolver: zodResolver(forgotPasswordFormSchema),
    mode: 'onTouched',
    defaultValues: { email: '' },
  });
  const { errors } = form.formState;

  if (request.isSuccess) {
    return (
      <Alert tone="success" title="Check your inbox">
        If an account uses {request.variables.email}, a link to choose a new password is on its way. The link works once and
        expires after an hour.
      </Alert>
    );
  }

  return (
    <form onSubmit={form.handleSubmit((values) => request.mutate(values))} noValidate aria-label="Request a password reset" className="flex flex-col gap-5">
      {request.isError && <Alert tone="error">{messageOf(request.error)}</Alert>}
      <TextField label="E-mail" type="email" autoComplete="email" inputMode="email" error={errors.email?.message} {...form.register('email')} />
      <Button type="submit" pending={request.isPending} className="self-start">
        Send reset link
      </Button>
    </form>
  );
}
