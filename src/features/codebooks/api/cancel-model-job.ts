import { modelJobResponse, type ModelJobView } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

/** Cancels an anomaly or denoise job (409 once it has ended). */
export function cancelModelJob(teamId: number, jobId: number): Promise<ModelJobView> {
  return apiRequest(`/teams/${teamId}/model-jobs/${jobId}/cancel`, { method: 'POST', schema: modelJobResponse });
}
