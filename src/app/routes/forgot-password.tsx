import { Link } from 'react-router-dom';
import { href } from '../../config/routes';
import { AuthLayout } from '../../components/layouts/auth-layout';
import { ForgotPasswordForm } from '../../features/auth/components/forgot-password-form';

export function Component() {
  return (
    <AuthLayout
      title="Reset your password"
      description="Enter the address you sign in with and we will e-mail you a link to choose a new password."
      aside={
        <Link to={href.signIn()} className="font-medium text-ember-700 hover:underline">
          Back to sign in
        </Link>
      }
    >
      <title>Reset password · Cellwright</title>
      <ForgotPasswordForm />
    </AuthLayout>
  );
}
