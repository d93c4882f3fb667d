import { useMutation, useQueryClient } from '@tanstack/react-query';
import type { z } from 'zod';
import { imageSetResponse, type createImageSetBody, type ImageSet } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { imageSetKeys } from './keys';

export type CreateImageSetInput = z.input<typeof createImageSetBody>;

export async function createImageSet(teamId: number, body: CreateImageSetInput): Promise<ImageSet> {
  const answer = await apiRequest(`/teams/${teamId}/image-sets`, { method: 'POST', body, schema: imageSetResponse });
  return answer.imageSet;
}

export function useCreateImageSet(teamId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (body: CreateImageSetInput) => createImageSet(teamId, body),
    onSuccess: () => queryClient.invalidateQueries({ queryKey: imageSetKeys.list(teamId) }),
  });
}
