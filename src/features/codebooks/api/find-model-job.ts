import type { z } from 'zod';
import { modelJobLookupResponse, type anomalyJobBody, type denoiseJobBody, type ModelJobLookup } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

/** The anomaly job the same request queued before (not failed or cancelled), or null: queues nothing. */
export function findAnomalyJob(teamId: number, codebookId: number, body: z.input<typeof anomalyJobBody>): Promise<ModelJobLookup> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/anomaly-jobs/find`, { method: 'POST', body, schema: modelJobLookupResponse });
}

/** The denoise job the same request queued before (not failed or cancelled), or null: queues nothing. */
export function findDenoiseJob(teamId: number, codebookId: number, body: z.input<typeof denoiseJobBody>): Promise<ModelJobLookup> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/denoise-jobs/find`, { method: 'POST', body, schema: modelJobLookupResponse });
}
