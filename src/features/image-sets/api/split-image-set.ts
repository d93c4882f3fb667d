import { useMutation, useQueryClient } from '@tanstack/react-query';
import type { z } from 'zod';
import { splitResponse, type splitImageSetBody } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { imageSetKeys } from './keys';

export type SplitInput = z.input<typeof splitImageSetBody>;
export type SplitResult = z.infer<typeof splitResponse>;

export function splitImageSet(teamId: number, setId: number, body: SplitInput): Promise<SplitResult> {
  return apiRequest(`/teams/${teamId}/image-sets/${setId}/split`, { method: 'POST', body, schema: splitResponse });
}

export function useSplitImageSet(teamId: number, setId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: (body: SplitInput) => splitImageSet(teamId, setId, body),
    onSuccess: () => queryClient.invalidateQueries({ queryKey: imageSetKeys.team(teamId) }),
  });
}
