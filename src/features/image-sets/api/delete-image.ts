import { useMutation, useQueryClient } from '@tanstack/react-query';
import { apiRequest } from '../../../lib/api-client';
import { imageSetKeys } from './keys';

/** Admin only; 409 while a run uses the image. */
export function deleteImage(teamId: number, imageId: number): Promise<undefined> {
  return apiRequest(`/teams/${teamId}/images/${imageId}`, { method: 'DELETE' });
}

export function useDeleteImage(teamId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (imageId: number) => deleteImage(teamId, imageId),
    onSuccess: () => queryClient.invalidateQueries({ queryKey: imageSetKeys.team(teamId) }),
  });
}
