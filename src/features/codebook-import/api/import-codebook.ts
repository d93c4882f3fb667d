import { useMutation } from '@tanstack/react-query';
import { codebookResponse, type CodebookDetail } from '../../../../server/contracts';
import { apiRequest } from '../../../lib/api-client';

/** The document goes as the JSON body exactly as read; the server checks schema and checksum and names the field at fault. */
export async function importCodebook(teamId: number, document: unknown, name?: string): Promise<CodebookDetail> {
  const query = name ? `?name=${encodeURIComponent(name)}` : '';
  const answer = await apiRequest(`/teams/${teamId}/codebooks/import${query}`, { method: 'POST', body: document, schema: codebookResponse });
  return answer.codebook;
}

export function useImportCodebook(teamId: number) {
  // The lists this changes belong to the codebooks feature; the page that uses this hook invalidates them.
  return useMutation({
    mutationFn: ({ document, name }: { document: unknown; name?: string }) => importCodebook(teamId, document, name),
  });
}
