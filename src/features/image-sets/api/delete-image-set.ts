import { useMutation, useQueryClient } from '@tanstack/react-query';
import { apiRequest } from '../../../lib/api-client';
import { imageSetKeys } from './keys';

/** Admin only; 409 while a run uses any of the set's images. */
export function deleteImageSet(teamId: number, setId: number): Promise<undefined> {
  return apiRequest(`/teams/${teamId}/image-sets/${setId}`, { method: 'DELETE' });
}

export function useDeleteImageSet(teamId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (setId: number) => deleteImageSet(teamId, setId),
    onSuccess: (_answer, setId) => {
      // The deleted set's own entries would only answer 404 now; drop them rather than refetch.
      queryClient.removeQueries({ queryKey: imageSetKeys.set(teamId, setId) });
      return queryClient.invalidateQueries({ queryKey: imageSetKeys.list(teamId) });
    },
  });
}
