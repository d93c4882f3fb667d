import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import { Link } from 'react-router-dom';
import { href } from '../../../config/routes';
import type { z } from 'zod';
import { messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useConfirmPasswordReset } from '../api/confirm-password-reset';
import { resetPasswordFormSchema, type ResetPasswordFormValues } from '../schemas';

export function ResetPasswordForm({ token, onReset }: { token: string; onReset: () => void }) {
  const confirm = useConfirmPasswordReset();
  const form = useForm<ResetPasswordFormValues, unknown, z.output<typeof resetPasswordFormSchema>>({
    resolver: zodResolver(resetPasswordFormSchema),
    mode: 'onTouched',
    defaultValues: { password: '', confirm: '' },
  });
  const { errors } = form.formState;

  const submit = form.handleSubmit(({ password }) => confirm.mutate({ token, password }, { onSuccess: onReset }));

  return (
    <form onSubmit={submit} noValidate aria-label="Choose a new password" className="flex flex-col gap-5">
      {confirm.isError && (
        <Alert tone="error">
          <p>{messageOf(confirm.error)}</p>
          <p className="mt-1">
            <Link to={href.forgotPassword()} className="font-medium underline">
              Request a new link
            </Link>
          </p>
        </Alert>
      )}
      <TextField
        label="New password"
        type="password"
        autoComplete="new-password"
        hint="At least 10 characters."
        error={errors.password?.message}
        {...form.register('password')}
      />
      <TextField label="Repeat new password" type="password" autoComplete="new-password" error={errors.confirm?.message} {...form.register('confirm')} />
      <Button type="submit" pending={confirm.isPending} className="self-start">
        Set new password
      </Button>
    </form>
  );
}
