import type { z } from 'zod';
import { modelJobResponse, type anomalyJobBody, type denoiseJobBody, type ModelJobView } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

/** Queues an anomaly job (202): with imageId a map of that image's blocks, else a ranked list over the held-out images or a set. */
export function startAnomalyJob(teamId: number, codebookId: number, body: z.input<typeof anomalyJobBody>): Promise<ModelJobView> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/anomaly-jobs`, { method: 'POST', body, schema: modelJobResponse });
}

/** Queues a denoise job (202): seeded noise of σ added to one image and removed by both estimators. */
export function startDenoiseJob(teamId: number, codebookId: number, body: z.input<typeof denoiseJobBody>): Promise<ModelJobView> {
  return apiRequest(`/teams/${teamId}/codebooks/${codebookId}/denoise-jobs`, { method: 'POST', body, schema: modelJobResponse });
}
