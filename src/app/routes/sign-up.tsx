import { Link } from 'react-router-dom';
import { href } from '../../config/routes';
import { AuthLayout } from '../../components/layouts/auth-layout';
import { SignUpForm } from '../../features/auth/components/sign-up-form';

export function Component() {
  return (
    <AuthLayout
      title="Create a team"
      description="A team holds image sets, training runs and codebooks. Start with your e-mail address; you can invite colleagues once the team exists."
      aside={
        <>
          Already have an account?{' '}
          <Link to={href.signIn()} className="font-medium text-ember-700 hover:underline">
            Sign in
          </Link>
        </>
      }
    >
      <title>Create a team · Cellwright</title>
      <SignUpForm />
    </AuthLayout>
  );
}
