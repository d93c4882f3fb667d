import { useMutation, useQueryClient } from '@tanstack/react-query';
import type { Role } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { memberKeys } from './keys';

/** The table is refetched afterwards, so the answer's body is not needed here. */
export async function updateMemberRole(teamId: number, userId: number, role: Role): Promise<void> {
  await apiRequest<unknown>(`/teams/${teamId}/members/${userId}`, { method: 'PATCH', body: { role } });
}

export function useUpdateMemberRole(teamId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: ({ userId, role }: { userId: number; role: Role }) => updateMemberRole(teamId, userId, role),
    // Awaited so the table shows the new role by the time the dialog closes.
    onSuccess: () => queryClient.invalidateQueries({ queryKey: memberKeys.list(teamId) }),
  });
}
