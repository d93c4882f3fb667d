import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import type { z } from 'zod';
import { messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useChangePassword } from '../api/change-password';
import { changePasswordFormSchema, type ChangePasswordFormValues } from '../schemas';

export function ChangePasswordForm() {
  const change = useChangePassword();
  const form = useForm<ChangePasswordFormValues, unknown, z.output<typeof changePasswordFormSchema>>({
    resolver: zodResolver(changePasswordFormSchema),
    mode: 'onTouched',
    defaultValues: { currentPassword: '', newPassword: '', confirm: '' },
  });
  const { errors } = form.formState;

  const submit = form.handleSubmit(({ currentPassword, newPassword }) =>
    change.mutate({ currentPassword, newPassword }, { onSuccess: () => form.reset() }),
  );

  return (
    <form onSubmit={submit} noValidate aria-label="Change your password" className="flex flex-col gap-5">
      {change.isSuccess && (
        <Alert tone="success" title="Password changed">
          Every other browser or script signed in to this account has been signed out; this one stays signed in.
        </Alert>
      )}
      {change.isError && <Alert tone="error">{messageOf(change.error)}</Alert>}
      <TextField
        label="Current password"
        type="password"
        autoComplete="current-password"
        error={errors.currentPassword?.message}
        {...form.register('currentPassword')}
      />
      <TextField
        label="New password"
        type="password"
        autoComplete="new-password"
        hint="At least 10 characters, at most 72 bytes."
        error={errors.newPassword?.message}
        {...form.register('newPassword')}
      />
      <TextField label="Repeat new password" type="password" autoComplete="new-password" error={errors.confirm?.message} {...form.register('confirm')} />
      <Button type="submit" pending={change.isPending} className="self-start">
        Change password
      </Button>
    </form>
  );
}
