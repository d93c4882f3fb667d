import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import type { z } from 'zod';
import { messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useRequestSignUp } from '../api/sign-up';
import { signUpFormSchema, type SignUpFormValues } from '../schemas';

/** Step one of signing up: the address. The mailed link leads to step two (name, password, team). */
export function SignUpForm() {
  const request = useRequestSignUp();
  const form = useForm<SignUpFormValues, unknown, z.output<typeof signUpFormSchema>>({
    resolver: zodResolver(signUpFormSchema),
    mode: 'onTouched',
    defaultValues: { email: '' },
  });
  const { errors } = form.formState;

  if (request.isSuccess) {
    return (
      <Alert tone="success" title="Check your inbox">
        We sent a message to {request.variables.email}. Follow its link to choose your name, password and team; the link works
        once and expires after a day. If the address already has an account, the message says how to sign in instead.
      </Alert>
    );
  }

  return (
    <form onSubmit={form.handleSubmit((values) => request.mutate(values))} noValidate aria-label="Create a team" className="flex flex-col gap-5">
      {request.isError && <Alert tone="error">{messageOf(request.error)}</Alert>}
      <TextField
        label="Work e-mail"
        type="email"
        autoComplete="email"
        inputMode="email"
        hint="We e-mail you a link to finish: that proves the address is yours."
        error={errors.email?.message}
        {...form.register('email')}
      />
      <Button type="submit" pending={request.isPending} className="self-start">
        Send sign-up link
      </Button>
    </form>
  );
}
