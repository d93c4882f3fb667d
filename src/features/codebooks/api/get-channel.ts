import { queryOptions, useQuery } from '@tanstack/react-query';
import { channelResponse, roundingResponse, type ChannelResponse, type RoundingResponse } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { apiRequest } from '../../../lib/api-client';
import { codebookKeys } from './keys';

/** PSNR against bit-error rate on the codebook's held-out images: measured over `seeds` simulations and expected. */
export function getChannelCurve(teamId: number, codebookId: number, bers: readonly number[], seeds: number, resync: number, { signal }: { signal?: AbortSignal } = {}): Promise<ChannelResponse> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/channel?ber=${bers.join(',')}&seeds=${seeds}&resync=${resync}`, { signal, schema: channelResponse });
}

export const channelCurveQueryOptions = (teamId: number, codebookId: number, bers: readonly number[], seeds: number, resync: number) =>
  queryOptions({
    queryKey: codebookKeys.channel(teamId, codebookId, bers.join(','), seeds, resync),
    queryFn: ({ signal }) => getChannelCurve(teamId, codebookId, bers, seeds, resync, { signal }),
    // Seeded: the same codebook, images and settings always give the same curve.
    staleTime: Infinity,
  });

export function useChannelCurve(teamId: number, codebookId: number, bers: readonly number[], seeds: number, resync: number, enabled: boolean) {
  return useQuery({ ...channelCurveQueryOptions(teamId, codebookId, bers, seeds, resync), enabled });
}

/** The firmware bundle (C header, reference decoder, example program, README) as a zip download. */
export function firmwareZipUrl(teamId: number, codebookId: number): string {
  return `${env.apiBasePath}/teams/${teamId}/codebooks/${codebookId}/firmware`;
}

/** What the firmware table's fixed point costs on the codebook's held-out images, measured when asked (seconds). */
export function useFirmwareRounding(teamId: number, codebookId: number, enabled: boolean) {
  return useQuery({
    queryKey: codebookKeys.rounding(teamId, codebookId),
    queryFn: ({ signal }): Promise<RoundingResponse> => apiRequest(`/teams/${teamId}/codebooks/${codebookId}/firmware/rounding`, { signal, schema: roundingResponse }),
    // The codebook, its held-out images and the table are fixed, so the figure never changes.
    staleTime: Infinity,
    enabled,
  });
}
