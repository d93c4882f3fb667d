import { Link, useNavigate } from 'react-router-dom';
import { href } from '../../config/routes';
import { rememberTeam } from '../../lib/auth';
import { AuthLayout } from '../../components/layouts/auth-layout';
import { SignUpForm } from '../../features/auth/components/sign-up-form';

export function Component() {
  const navigate = useNavigate();
  return (
    <AuthLayout
      title="Create a team"
      description="A team holds image sets, training runs and codebooks. You can invite colleagues once it exists."
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
      <SignUpForm
        onSignedUp={({ team }) => {
          rememberTeam(team.id);
          navigate(href.team(team.id), { replace: true });
        }}
      />
    </AuthLayout>
  );
}
