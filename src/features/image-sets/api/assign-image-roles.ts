import { useMutation, useQueryClient } from '@tanstack/react-query';
import { imageSetResponse, type ImageRole, type ImageSet } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { imageSetKeys } from './keys';

/**
 * One PATCH for any number of images: the server applies all of the assignments or none, so a
 * multi-selection never ends up half marked.
 */
export async function assignImageRoles(teamId: number, setId: number, imageIds: number[], role: ImageRole): Promise<ImageSet> {
  const body = { assignments: imageIds.map((imageId) => ({ imageId, role })) };
  const answer = await apiRequest(`/teams/${teamId}/image-sets/${setId}`, { method: 'PATCH', body, schema: imageSetResponse });
  return answer.imageSet;
}

export function useAssignImageRoles(teamId: number, setId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: ({ imageIds, role }: { imageIds: number[]; role: ImageRole }) => assignImageRoles(teamId, setId, imageIds, role),
    // The set's counts and the list's counts change with the roles.
    onSuccess: () => queryClient.invalidateQueries({ queryKey: imageSetKeys.team(teamId) }),
  });
}
