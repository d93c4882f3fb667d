import { useState } from 'react';
import { Link, useParams } from 'react-router-dom';
import { href } from '../../config/routes';
import { AuthLayout } from '../../components/layouts/auth-layout';
import { Alert } from '../../components/ui/alert';
import { buttonClass } from '../../components/ui/button';
import { ResetPasswordForm } from '../../features/auth/components/reset-password-form';

export function Component() {
  const { token = '' } = useParams();
  const [done, setDone] = useState(false);
  return (
    <AuthLayout title="Choose a new password" description={done ? undefined : 'The link in your e-mail works once and expires after an hour.'}>
      <title>New password · Cellwright</title>
      {done ? (
        <div className="flex flex-col items-start gap-4">
          <Alert tone="success" title="Password changed">
            Sign in with your new password.
          </Alert>
          <Link to={href.signIn()} className={buttonClass('primary')}>
            Sign in
          </Link>
        </div>
      ) : (
        <ResetPasswordForm token={token} onReset={() => setDone(true)} />
      )}
    </AuthLayout>
  );
}
