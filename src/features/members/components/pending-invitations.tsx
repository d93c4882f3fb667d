import { useState } from 'react';
import type { Invitation } from '../../../../server/contracts';
import { formatDateTime } from '../../../lib/format';
import { messageOf } from '../../../lib/api-client';
import { Button } from '../../../components/ui/button';
import { ConfirmDialog } from '../../../components/ui/confirm-dialog';
import { EmptyState } from '../../../components/ui/states';
import { useRevokeInvitation } from '../api/revoke-invitation';
import { RoleBadge } from './members-table';

export function PendingInvitations({ teamId, invitations }: { teamId: number; invitations: Invitation[] }) {
  const [target, setTarget] = useState<Invitation | null>(null);
  const revoke = useRevokeInvitation(teamId);
  const pending = invitations.filter((invitation) => invitation.acceptedAt === null);

  const close = () => {
    setTarget(null);
    revoke.reset();
  };

  if (pending.length === 0) {
    return <EmptyState title="No pending invitations">Invitations you send appear here until they are accepted, revoked or expire.</EmptyState>;
  }

  return (
    <>
      <ul className="divide-y divide-ink-100">
        {pending.map((invitation) => (
          <li key={invitation.id} className="flex flex-wrap items-center justify-between gap-3 py-3">
            <div className="min-w-0">
              <p className="flex items-center gap-2 font-medium text-ink-950">
                <span className="truncate">{invitation.email}</span>
                <RoleBadge role={invitation.role} />
              </p>
              <p className="text-sm text-ink-600">
                Invited by {invitation.invitedBy} · expires <span className="num">{formatDateTime(invitation.expiresAt)}</span>
              </p>
            </div>
            <Button variant="ghost" size="sm" onClick={() => setTarget(invitation)} aria-label={`Revoke invitation for ${invitation.email}`}>
              Revoke
            </Button>
          </li>
        ))}
      </ul>
      <ConfirmDialog
        open={target !== null}
        title="Revoke invitation?"
        confirmLabel="Revoke invitation"
        pending={revoke.isPending}
        error={revoke.isError ? messageOf(revoke.error) : null}
        onConfirm={() => target && revoke.mutate(target.id, { onSuccess: close })}
        onCancel={close}
      >
        <p>The link sent to {target?.email} stops working at once. You can invite the address again later.</p>
      </ConfirmDialog>
    </>
  );
}
