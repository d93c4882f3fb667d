import { env } from '../../../config/env';

/** The thumbnail's URL; the browser fetches it itself (with the session cookie) and caches it by ETag. */
export function thumbnailUrl(teamId: number, imageId: number): string {
  return `${env.apiBasePath}/teams/${teamId}/images/${imageId}/thumbnail`;
}
