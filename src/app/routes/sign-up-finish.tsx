import { Link, useNavigate, useParams } from 'react-router-dom';
import { href } from '../../config/routes';
import { isApiError, messageOf } from '../../lib/api-client';
import { rememberTeam } from '../../lib/auth';
import { AuthLayout } from '../../components/layouts/auth-layout';
import { ErrorState, LoadingState } from '../../components/ui/states';
import { useSignupLink } from '../../features/auth/api/get-signup-link';
import { FinishSignUpForm } from '../../features/auth/components/finish-sign-up-form';

// No loader: a spent or unknown link is an expected outcome shown in the page, not a route error.
export function Component() {
  const { token = '' } = useParams();
  const navigate = useNavigate();
  const link = useSignupLink(token);
  // 410 says why a one-time link is spent (used, expired); 404 means it never existed.
  const spent = isApiError(link.error) && (link.error.status === 410 || link.error.status === 404);

  return (
    <AuthLayout
      title="Finish creating your account"
      description={link.data ? `You sign in with ${link.data.email}.` : undefined}
      aside={
        <>
          Already have an account?{' '}
          <Link to={href.signIn()} className="font-medium text-ember-700 hover:underline">
            Sign in
          </Link>
        </>
      }
    >
      <title>Finish signing up · Cellwright</title>
      {link.isPending && <LoadingState label="Checking your link…" />}
      {link.isError && (
        <ErrorState
          title={spent ? 'This sign-up link is no longer valid' : 'The link could not be checked'}
          message={spent ? `${isApiError(link.error) && link.error.status === 410 ? `${messageOf(link.error)}. ` : ''}Ask for a new link on the sign-up page.` : messageOf(link.error)}
          onRetry={spent ? undefined : () => void link.refetch()}
        />
      )}
      {spent && (
        <Link to={href.signUp()} className="mt-4 inline-block font-medium text-ember-700 hover:underline">
          Ask for a new link
        </Link>
      )}
      {link.data && (
        <FinishSignUpForm
          token={token}
          onSignedUp={({ team }) => {
            rememberTeam(team.id);
            navigate(href.team(team.id), { replace: true });
          }}
        />
      )}
    </AuthLayout>
  );
}
