import { useMutation, useQueryClient } from '@tanstack/react-query';
import { z } from 'zod';
import { errorBody, uploadRejection, uploadResponse, type UploadResult } from '../../../../server/contracts';
import { env } from '../../../config/env';
import { ApiError } from '../../../lib/api-client';
import { imageSetKeys } from './keys';

export type UploadProgress = { loaded: number; total: number };

const rejectedOnly = z.array(uploadRejection).min(1);

function parseJson(text: string): unknown {
  try {
    return text ? JSON.parse(text) : undefined;
  } catch {
    return undefined;
  }
}

/**
 * Uploads one file (an image or a .zip of images) as its own multipart request. XMLHttpRequest rather than fetch
 * because only XHR reports upload progress, and one request per file gives each file its own bar and its own
 * answer. When the server could use none of the file's contents it answers 400 with the per-file rejections in
 * `details`; that is resolved as a result, like a partial success, so every outcome is shown beside its file.
 */
export function uploadImageFile(
  teamId: number,
  setId: number,
  file: File,
  { onProgress, signal }: { onProgress?: (progress: UploadProgress) => void; signal?: AbortSignal } = {},
): Promise<UploadResult> {
  return new Promise((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    const url = new URL(`${env.apiBasePath}/teams/${teamId}/image-sets/${setId}/images`, window.location.origin);
    xhr.open('POST', url.href);
    xhr.setRequestHeader('Accept', 'application/json');

    const abort = () => xhr.abort();
    signal?.addEventListener('abort', abort, { once: true });
    const done = () => signal?.removeEventListener('abort', abort);

    xhr.upload.addEventListener('progress', (event) => {
      if (event.lengthComputable) onProgress?.({ loaded: event.loaded, total: event.total });
    });
    xhr.addEventListener('abort', () => {
      done();
      reject(new DOMException('The upload was cancelled', 'AbortError'));
    });
    xhr.addEventListener('error', () => {
      done();
      reject(new ApiError(0, 'network_error', 'The Cellwright server could not be reached. Check your connection and try again.'));
    });
    xhr.addEventListener('load', () => {
      done();
      const payload = parseJson(xhr.responseText);
      if (xhr.status >= 200 && xhr.status < 300) {
        const checked = uploadResponse.safeParse(payload);
        if (checked.success) resolve(checked.data);
        else reject(new ApiError(xhr.status, 'invalid_response', 'The server sent an answer this version of the studio does not understand.', checked.error.issues));
        return;
      }
      const parsed = errorBody.safeParse(payload);
      if (!parsed.success) {
        reject(new ApiError(xhr.status, xhr.status >= 500 ? 'internal' : 'bad_request', `The server answered ${xhr.status}`));
        return;
      }
      const { code, message, details } = parsed.data.error;
      const rejected = xhr.status === 400 ? rejectedOnly.safeParse(details) : null;
      if (rejected?.success) resolve({ images: [], rejected: rejected.data, duplicates: [] });
      else reject(new ApiError(xhr.status, code, message, details));
    });

    const form = new FormData();
    form.append('files', file, file.name);
    onProgress?.({ loaded: 0, total: file.size });
    xhr.send(form);
  });
}

export type UploadVariables = { file: File; onProgress?: (progress: UploadProgress) => void; signal?: AbortSignal };

/** Concurrent calls are independent: each resolves with its own file's answer. */
export function useUploadImageFile(teamId: number, setId: number) {
  const queryClient = useQueryClient();
  return useMutation({
    mutationFn: ({ file, onProgress, signal }: UploadVariables) => uploadImageFile(teamId, setId, file, { onProgress, signal }),
    // The set's images and every count shown for it (set page, list, team home) change with each file.
    onSettled: () => queryClient.invalidateQueries({ queryKey: imageSetKeys.team(teamId) }),
  });
}
