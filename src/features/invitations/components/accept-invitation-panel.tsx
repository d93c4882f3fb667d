import { zodResolver } from '@hookform/resolvers/zod';
import { useForm } from 'react-hook-form';
import { Link } from 'react-router-dom';
import { z } from 'zod';
import { password, type AcceptInvitationResponse, type InvitationPreview } from '../../../../server/contracts';
import { roleDescriptions, roleLabels } from '../../../config/roles';
import { formatDateTime } from '../../../lib/format';
import { fieldErrorsOf, messageOf } from '../../../lib/api-client';
import { Alert } from '../../../components/ui/alert';
import { Badge } from '../../../components/ui/badge';
import { Button, buttonClass } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { useAcceptInvitation } from '../api/accept-invitation';

const newAccountSchema = z
  .object({
    name: z.string().trim().min(1, 'Enter your name').max(120, 'Names are at most 120 characters'),
    password,
    confirm: z.string().min(1, 'Repeat the password'),
  })
  .refine((values) => values.password === values.confirm, { path: ['confirm'], message: 'The two passwords differ' });

export function InvitationSummary({ preview }: { preview: InvitationPreview }) {
  return (
    <dl className="grid grid-cols-[auto_1fr] gap-x-5 gap-y-2 rounded-lg border border-ink-200 bg-surface px-4 py-3.5 text-sm shadow-card">
      <dt className="text-ink-600">Team</dt>
      <dd className="font-semibold text-ink-950">{preview.teamName}</dd>
      <dt className="text-ink-600">Role</dt>
      <dd>
        <Badge tone={preview.role === 'admin' ? 'accent' : 'outline'}>{roleLabels[preview.role]}</Badge>
        <span className="ml-2 text-ink-600">{roleDescriptions[preview.role]}</span>
      </dd>
      <dt className="text-ink-600">For</dt>
      <dd className="text-ink-900">{preview.email}</dd>
      <dt className="text-ink-600">Expires</dt>
      <dd className="num text-ink-900">{formatDateTime(preview.expiresAt)}</dd>
    </dl>
  );
}

/**
 * Who the page is talking to: nobody signed in, or the e-mail of the account this browser is signed in as
 * (undefined while that is being checked).
 */
export type SignedInAs = string | null | undefined;

export function AcceptInvitationPanel({
  token,
  preview,
  signedInAs,
  signInHref,
  onSwitchAccount,
  switching,
  onAccepted,
}: {
  token: string;
  preview: InvitationPreview;
  signedInAs: SignedInAs;
  /** Sign-in page that comes back here afterwards. */
  signInHref: string;
  /** Signs the current account out, then goes to signInHref. */
  onSwitchAccount: () => void;
  switching: boolean;
  onAccepted: (result: AcceptInvitationResponse) => void;
}) {
  return (
    <div className="flex flex-col gap-6">
      <InvitationSummary preview={preview} />
      {!preview.existingAccount ? (
        <AcceptNewAccount token={token} onAccepted={onAccepted} />
      ) : signedInAs === undefined ? null : signedInAs === preview.email ? (
        <AcceptExisting token={token} onAccepted={onAccepted} />
      ) : signedInAs === null ? (
        // The link alone never signs anyone in to an existing account: whoever holds it must prove they own it.
        <div className="flex flex-col items-start gap-4">
          <p className="text-base text-ink-700">
            {preview.email} already has a Cellwright account. Sign in as {preview.email}, and you come back here to accept.
          </p>
          <Link to={signInHref} className={buttonClass('primary')}>
            Sign in to accept
          </Link>
        </div>
      ) : (
        <div className="flex flex-col items-start gap-4">
          <Alert tone="info">
            You are signed in as {signedInAs}, but this invitation is for {preview.email}. Sign in as {preview.email} to accept it.
          </Alert>
          <Button variant="secondary" pending={switching} onClick={onSwitchAccount}>
            Sign out and sign in as {preview.email}
          </Button>
        </div>
      )}
    </div>
  );
}

function AcceptExisting({ token, onAccepted }: { token: string; onAccepted: (result: AcceptInvitationResponse) => void }) {
  const accept = useAcceptInvitation(token);
  return (
    <div className="flex flex-col gap-4">
      <p className="text-base text-ink-700">You are signed in with the invited address. Accepting adds the team to your account.</p>
      {accept.isError && <Alert tone="error">{messageOf(accept.error)}</Alert>}
      <Button className="self-start" pending={accept.isPending} onClick={() => accept.mutate({}, { onSuccess: onAccepted })}>
        Accept and join team
      </Button>
    </div>
  );
}

function AcceptNewAccount({ token, onAccepted }: { token: string; onAccepted: (result: AcceptInvitationResponse) => void }) {
  const accept = useAcceptInvitation(token);
  const form = useForm<z.input<typeof newAccountSchema>, unknown, z.output<typeof newAccountSchema>>({
    resolver: zodResolver(newAccountSchema),
    mode: 'onTouched',
    defaultValues: { name: '', password: '', confirm: '' },
  });
  const { errors } = form.formState;
  const serverFields = fieldErrorsOf(accept.error);

  const submit = form.handleSubmit(({ name, password: chosen }) => accept.mutate({ name, password: chosen }, { onSuccess: onAccepted }));

  return (
    <form onSubmit={submit} noValidate aria-label="Create your account" className="flex flex-col gap-5">
      <p className="text-base text-ink-700">Create your account to join. You sign in with the invited address.</p>
      {accept.isError && <Alert tone="error">{messageOf(accept.error)}</Alert>}
      <TextField label="Your name" autoComplete="name" error={errors.name?.message ?? serverFields.name} {...form.register('name')} />
      <TextField
        label="Password"
        type="password"
        autoComplete="new-password"
        hint="At least 10 characters, at most 72 bytes."
        error={errors.password?.message ?? serverFields.password}
        {...form.register('password')}
      />
      <TextField label="Repeat password" type="password" autoComplete="new-password" error={errors.confirm?.message} {...form.register('confirm')} />
      <Button type="submit" pending={accept.isPending} className="self-start">
        Create account and join
      </Button>
    </form>
  );
}
