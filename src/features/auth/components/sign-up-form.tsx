import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import type { z } from 'zod';
import { fieldErrorsOf, messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useSignUp, type SignupResult } from '../api/sign-up';
import { signUpFormSchema, type SignUpFormValues } from '../schemas';

export function SignUpForm({ onSignedUp }: { onSignedUp: (result: SignupResult) => void }) {
  const signUp = useSignUp();
  const form = useForm<SignUpFormValues, unknown, z.output<typeof signUpFormSchema>>({
    resolver: zodResolver(signUpFormSchema),
    mode: 'onTouched',
    defaultValues: { name: '', email: '', password: '', teamName: '' },
  });
  const { errors } = form.formState;
  const serverFields = fieldErrorsOf(signUp.error);

  const submit = form.handleSubmit((values) => signUp.mutate(values, { onSuccess: onSignedUp }));

  return (
    <form onSubmit={submit} noValidate aria-label="Create a team" className="flex flex-col gap-5">
      {signUp.isError && <Alert tone="error">{messageOf(signUp.error)}</Alert>}
      <TextField label="Your name" autoComplete="name" error={errors.name?.message ?? serverFields.name} {...form.register('name')} />
      <TextField
        label="Work e-mail"
        type="email"
        autoComplete="email"
        inputMode="email"
        error={errors.email?.message ?? serverFields.email}
        {...form.register('email')}
      />
      <TextField
        label="Password"
        type="password"
        autoComplete="new-password"
        hint="At least 10 characters. A phrase of several words is easier to remember."
        error={errors.password?.message ?? serverFields.password}
        {...form.register('password')}
      />
      <TextField
        label="Team name"
        autoComplete="organization"
        hint="You become the team's admin and can invite engineers and viewers."
        error={errors.teamName?.message ?? serverFields.teamName}
        {...form.register('teamName')}
      />
      <Button type="submit" pending={signUp.isPending} className="self-start">
        Create team
      </Button>
    </form>
  );
}
