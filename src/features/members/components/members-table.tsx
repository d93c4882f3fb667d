import { useState } from 'react';
import { roles, type Member, type Role } from '../../../../server/contracts';
import { roleLabels } from '../../../config/roles';
import { formatDate } from '../../../lib/format';
import { messageOf } from '../../../lib/api-client';
import { Badge } from '../../../components/ui/badge';
import { Button } from '../../../components/ui/button';
import { ConfirmDialog } from '../../../components/ui/confirm-dialog';
import { useRemoveMember } from '../api/remove-member';
import { useUpdateMemberRole } from '../api/update-member-role';

type Pending = { kind: 'role'; member: Member; role: Role } | { kind: 'remove'; member: Member } | null;

export function RoleBadge({ role }: { role: Role }) {
  return <Badge tone={role === 'admin' ? 'accent' : role === 'engineer' ? 'ink' : 'outline'}>{roleLabels[role]}</Badge>;
}

/**
 * Team members. Admins change roles and remove members from here; every change waits for a
 * confirmation because it takes effect on the member's next request.
 */
export function MembersTable({
  teamId,
  members,
  currentUserId,
  canManage,
  onOwnMembershipChanged,
}: {
  teamId: number;
  members: Member[];
  currentUserId: number;
  canManage: boolean;
  /** The signed-in admin changed their own role or left; the app must refresh the session's view. */
  onOwnMembershipChanged: () => void;
}) {
  const [pending, setPending] = useState<Pending>(null);
  const updateRole = useUpdateMemberRole(teamId);
  const remove = useRemoveMember(teamId);
  const mutation = pending?.kind === 'remove' ? remove : updateRole;

  const close = () => {
    setPending(null);
    updateRole.reset();
    remove.reset();
  };

  const confirm = () => {
    if (!pending) return;
    const own = pending.member.userId === currentUserId;
    const done = () => {
      close();
      if (own) onOwnMembershipChanged();
    };
    if (pending.kind === 'remove') remove.mutate(pending.member.userId, { onSuccess: done });
    else updateRole.mutate({ userId: pending.member.userId, role: pending.role }, { onSuccess: done });
  };

  // By name only, so a role change never moves the row out from under the pointer.
  const sorted = [...members].sort((a, b) => a.name.localeCompare(b.name));

  return (
    <>
      <div className="overflow-x-auto">
        <table className="w-full border-collapse text-left text-base">
          <caption className="sr-only">Team members and their roles</caption>
          <thead>
            <tr className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
              <th scope="col" className="py-2 pr-4 font-medium">
                Member
              </th>
              <th scope="col" className="py-2 pr-4 font-medium">
                Role
              </th>
              <th scope="col" className="py-2 pr-4 font-medium">
                Joined
              </th>
              {canManage && (
                <th scope="col" className="py-2 text-right font-medium">
                  <span className="sr-only">Actions</span>
                </th>
              )}
            </tr>
          </thead>
          <tbody>
            {sorted.map((m) => (
              <tr key={m.userId} className="border-b border-ink-100 last:border-b-0">
                <td className="py-3 pr-4">
                  <p className="font-medium text-ink-950">
                    {m.name}
                    {m.userId === currentUserId && <span className="ml-2 text-sm font-normal text-ink-600">(you)</span>}
                  </p>
                  <p className="text-sm text-ink-600">{m.email}</p>
                </td>
                <td className="py-3 pr-4">
                  {canManage ? (
                    <>
                      <label htmlFor={`role-${m.userId}`} className="sr-only">
                        Role of {m.name}
                      </label>
                      <select
                        id={`role-${m.userId}`}
                        value={m.role}
                        onChange={(event) => setPending({ kind: 'role', member: m, role: event.target.value as Role })}
                        className="h-8 rounded-md border border-ink-300 bg-surface px-2 text-sm hover:border-ink-400"
                      >
                        {roles.map((r) => (
                          <option key={r} value={r}>
                            {roleLabels[r]}
                          </option>
                        ))}
                      </select>
                    </>
                  ) : (
                    <RoleBadge role={m.role} />
                  )}
                </td>
                <td className="num py-3 pr-4 text-sm text-ink-700">{formatDate(m.joinedAt)}</td>
                {canManage && (
                  <td className="py-3 text-right">
                    <Button variant="ghost" size="sm" onClick={() => setPending({ kind: 'remove', member: m })} aria-label={`Remove ${m.name}`}>
                      Remove
                    </Button>
                  </td>
                )}
              </tr>
            ))}
          </tbody>
        </table>
      </div>
      <ConfirmDialog
        open={pending !== null}
        title={pending?.kind === 'remove' ? 'Remove member?' : 'Change role?'}
        confirmLabel={pending?.kind === 'remove' ? 'Remove member' : 'Change role'}
        tone={pending?.kind === 'remove' ? 'danger' : 'primary'}
        pending={mutation.isPending}
        error={mutation.isError ? messageOf(mutation.error) : null}
        onConfirm={confirm}
        onCancel={close}
      >
        {pending?.kind === 'remove' && (
          <p>
            {pending.member.name} ({pending.member.email}) loses access to this team at once. Their past work stays with the team.
          </p>
        )}
        {pending?.kind === 'role' && (
          <p>
            {pending.member.name} changes from {roleLabels[pending.member.role]} to {roleLabels[pending.role]}.
          </p>
        )}
      </ConfirmDialog>
    </>
  );
}
