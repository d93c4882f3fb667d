import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import type { z } from 'zod';
import { messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useFinishSignUp, type SignupResult } from '../api/finish-sign-up';
import { finishSignUpFormSchema, type FinishSignUpFormValues } from '../schemas';

/** Step two of signing up, reached by the mailed link: the account, its team, and a session. */
export function FinishSignUpForm({ token, onSignedUp }: { token: string; onSignedUp: (result: SignupResult) => void }) {
  const finish = useFinishSignUp();
  const form = useForm<FinishSignUpFormValues, unknown, z.output<typeof finishSignUpFormSchema>>({
    resolver: zodResolver(finishSignUpFormSchema),
    mode: 'onTouched',
    defaultValues: { name: '', password: '', confirm: '', teamName: '' },
  });
  const { errors } = form.formState;

  const submit = form.handleSubmit(({ name, password, teamName }) => finish.mutate({ token, name, password, teamName }, { onSuccess: onSignedUp }));

  return (
    <form onSubmit={submit} noValidate aria-label="Finish creating your account" className="flex flex-col gap-5">
      {finish.isError && <Alert tone="error">{messageOf(finish.error)}</Alert>}
      <TextField label="Your name" autoComplete="name" error={errors.name?.message} {...form.register('name')} />
      <TextField
        label="Password"
        type="password"
        autoComplete="new-password"
        hint="At least 10 characters, at most 72 bytes. A phrase of several words is easier to remember."
        error={errors.password?.message}
        {...form.register('password')}
      />
      <TextField label="Repeat password" type="password" autoComplete="new-password" error={errors.confirm?.message} {...form.register('confirm')} />
      <TextField
        label="Team name"
        autoComplete="organization"
        hint="You become the team's admin and can invite engineers and viewers."
        error={errors.teamName?.message}
        {...form.register('teamName')}
      />
      <Button type="submit" pending={finish.isPending} className="self-start">
        Create team
      </Button>
    </form>
  );
}
