import { queryOptions, useQuery } from '@tanstack/react-query';
import { openApiDocumentResponse, type OpenApiDocument } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';
import { apiReferenceKeys } from './keys';

export function getApiDescription({ signal }: { signal?: AbortSignal } = {}): Promise<OpenApiDocument> {
  return apiRequest('/openapi.json', { signal, schema: openApiDocumentResponse });
}

export const apiDescriptionQueryOptions = () =>
  queryOptions({
    queryKey: apiReferenceKeys.document,
    queryFn: ({ signal }) => getApiDescription({ signal }),
    // It changes only with a new server version.
    staleTime: Infinity,
  });

export function useApiDescription() {
  return useQuery(apiDescriptionQueryOptions());
}
