import { useCallback, useEffect, useRef, useState } from 'react';
import type { UploadRejection, UploadResult } from '../../../../server/contracts';
import { messageOf } from '../../../lib/api-client';
import { useUploadImageFile } from '../api/upload-image-file';

export type UploadStatus = 'queued' | 'uploading' | 'processing' | 'done' | 'failed' | 'cancelled';

export type UploadEntry = {
  key: string;
  name: string;
  size: number;
  status: UploadStatus;
  loaded: number;
  /** Images stored from this file (an archive can hold many). */
  stored: number;
  duplicates: number;
  rejected: UploadRejection[];
  /** Set when the request itself failed (network, limits, permissions), as opposed to per-file rejections. */
  error: string | null;
};

/** Two requests at a time keep the connection busy without making every bar crawl. */
const concurrency = 2;

let nextKey = 0;

/**
 * A queue of files to upload to one set, one request per file, with each file's progress and answer.
 * Files are taken in the order they were dropped; cancelling a queued file skips it, cancelling a running one
 * aborts its request.
 */
export function useUploadQueue(teamId: number, setId: number) {
  const upload = useUploadImageFile(teamId, setId);
  const [entries, setEntries] = useState<UploadEntry[]>([]);
  const files = useRef(new Map<string, File>());
  const controllers = useRef(new Map<string, AbortController>());
  const running = useRef(0);

  const patch = useCallback((key: string, change: Partial<UploadEntry>) => {
    setEntries((current) => current.map((entry) => (entry.key === key ? { ...entry, ...change } : entry)));
  }, []);

  const settle = useCallback(
    (key: string, result: UploadResult) => {
      patch(key, {
        status: result.images.length > 0 || result.duplicates.length > 0 ? 'done' : 'failed',
        stored: result.images.length,
        duplicates: result.duplicates.length,
        rejected: result.rejected,
      });
    },
    [patch],
  );

  const start = useCallback(
    (key: string) => {
      const file = files.current.get(key);
      // The file leaves the map when it starts, so a second call for the same entry (a re-run effect) does nothing.
      if (!file) return;
      files.current.delete(key);
      const controller = new AbortController();
      controllers.current.set(key, controller);
      running.current += 1;
      patch(key, { status: 'uploading' });
      upload
        .mutateAsync({
          file,
          signal: controller.signal,
          // Once every byte is sent the server still decodes and stores; say so rather than sit at 100 %.
          onProgress: ({ loaded, total }) => patch(key, { loaded, status: loaded >= total && total > 0 ? 'processing' : 'uploading' }),
        })
        .then(
          (result) => settle(key, result),
          (error: unknown) => {
            if (controller.signal.aborted) patch(key, { status: 'cancelled' });
            else patch(key, { status: 'failed', error: messageOf(error) });
          },
        )
        .finally(() => {
          running.current -= 1;
          controllers.current.delete(key);
          setPumpTick((tick) => tick + 1);
        });
    },
    [patch, settle, upload],
  );

  // Re-run after every change so a finished request makes room for the next queued file.
  const [pumpTick, setPumpTick] = useState(0);
  useEffect(() => {
    const queued = entries.filter((entry) => entry.status === 'queued');
    for (const entry of queued.slice(0, Math.max(0, concurrency - running.current))) start(entry.key);
  }, [entries, pumpTick, start]);

  const add = useCallback((list: Iterable<File>) => {
    const added: UploadEntry[] = [];
    for (const file of list) {
      nextKey += 1;
      const key = `upload-${nextKey}`;
      files.current.set(key, file);
      added.push({ key, name: file.name, size: file.size, status: 'queued', loaded: 0, stored: 0, duplicates: 0, rejected: [], error: null });
    }
    setEntries((current) => [...current, ...added]);
  }, []);

  const cancel = useCallback(
    (key: string) => {
      const controller = controllers.current.get(key);
      if (controller) controller.abort();
      else {
        files.current.delete(key);
        patch(key, { status: 'cancelled' });
      }
    },
    [patch],
  );

  const clearFinished = useCallback(() => {
    setEntries((current) => current.filter((entry) => entry.status === 'queued' || entry.status === 'uploading' || entry.status === 'processing'));
  }, []);

  // Leaving the page stops what is still sending; files already answered are kept by the server.
  useEffect(() => {
    const open = controllers.current;
    return () => open.forEach((controller) => controller.abort());
  }, []);

  const active = entries.some((entry) => entry.status === 'queued' || entry.status === 'uploading' || entry.status === 'processing');
  return { entries, add, cancel, clearFinished, active };
}
