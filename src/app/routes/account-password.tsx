import type { QueryClient } from '@tanstack/react-query';
import { Link, type LoaderFunctionArgs } from 'react-router-dom';
import { href } from '../../config/routes';
import { AuthLayout } from '../../components/layouts/auth-layout';
import { useMe } from '../../features/auth/api/get-me';
import { ChangePasswordForm } from '../../features/auth/components/change-password-form';
import { requireSession } from '../session';

export const clientLoader = (queryClient: QueryClient) => async ({ request }: LoaderFunctionArgs) => {
  await requireSession(queryClient, request);
  return null;
};

export function Component() {
  const me = useMe();
  return (
    <AuthLayout
      title="Change your password"
      description={me.data ? `For ${me.data.user.email}. Other sessions of this account end; this one stays.` : undefined}
      aside={
        <Link to={href.home()} className="font-medium text-ember-700 hover:underline">
          Back to the studio
        </Link>
      }
    >
      <title>Change password · Cellwright</title>
      <ChangePasswordForm />
    </AuthLayout>
  );
}
