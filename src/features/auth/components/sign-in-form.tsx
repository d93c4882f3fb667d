import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import { Link } from 'react-router-dom';
import type { LoginResponse } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useSignIn } from '../api/sign-in';
import { signInFormSchema, type SignInFormValues } from '../schemas';

export function SignInForm({ onSignedIn, defaultEmail = '' }: { onSignedIn: (result: LoginResponse) => void; defaultEmail?: string }) {
  const signIn = useSignIn();
  const form = useForm<SignInFormValues, unknown, { email: string; password: string }>({
    resolver: zodResolver(signInFormSchema),
    // Errors appear once a field is left, then update as the person types.
    mode: 'onTouched',
    defaultValues: { email: defaultEmail, password: '' },
  });
  const { errors } = form.formState;

  const submit = form.handleSubmit((values) => signIn.mutate(values, { onSuccess: onSignedIn }));

  return (
    <form onSubmit={submit} noValidate aria-label="Sign in" className="flex flex-col gap-5">
      {signIn.isError && <Alert tone="error">{messageOf(signIn.error)}</Alert>}
      <TextField
        label="E-mail"
        type="email"
        autoComplete="username"
        inputMode="email"
        error={errors.email?.message}
        {...form.register('email')}
      />
      <TextField
        label="Password"
        type="password"
        autoComplete="current-password"
        error={errors.password?.message}
        {...form.register('password')}
      />
      <div className="flex items-center justify-between gap-4">
        <Button type="submit" pending={signIn.isPending}>
          Sign in
        </Button>
        <Link to={href.forgotPassword()} className="text-sm font-medium text-ember-700 underline-offset-2 hover:underline">
          Forgot your password?
        </Link>
      </div>
    </form>
  );
}
