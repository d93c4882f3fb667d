import { Link, useNavigate, useSearchParams } from 'react-router-dom';
import { href } from '../../config/routes';
import { safeReturnTo } from '../../lib/auth';
import { AuthLayout } from '../../components/layouts/auth-layout';
import { SignInForm } from '../../features/auth/components/sign-in-form';

export function Component() {
  const navigate = useNavigate();
  const [params] = useSearchParams();
  const returnTo = safeReturnTo(params.get('returnTo'));
  const toInvitation = returnTo?.startsWith('/invite/') ?? false;
  return (
    <AuthLayout
      title="Sign in"
      description={
        toInvitation
          ? 'Sign in with the invited address; you go back to the invitation to accept it.'
          : returnTo
            ? 'Your session has ended. Sign in to continue where you were.'
            : 'Welcome back to the studio.'
      }
      aside={
        <>
          New to Cellwright?{' '}
          <Link to={href.signUp()} className="font-medium text-ember-700 hover:underline">
            Create a team
          </Link>
          . Joining an existing team? Use the link in your invitation e-mail.
        </>
      }
    >
      <title>Sign in · Cellwright</title>
      <SignInForm defaultEmail={params.get('email') ?? ''} onSignedIn={() => navigate(returnTo ?? href.home(), { replace: true })} />
    </AuthLayout>
  );
}
