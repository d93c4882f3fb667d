import { createHash, randomBytes } from 'node:crypto';
import { mkdir, rename, stat, unlink, writeFile } from 'node:fs/promises';
import path from 'node:path';
import type { RegisterWorkerResponse } from '../contracts';
import type { ImageRef } from '../jobs/compute/tasks';

/** What a worker asks of the studio over HTTP: to join, and the originals its task names. */
export interface StudioClient {
  register(): Promise<RegisterWorkerResponse>;
  /** The original's path in the local cache, fetched (and its digest checked) when missing. */
  original(image: ImageRef, signal: AbortSignal): Promise<string>;
}

export function createStudioClient(options: { studioUrl: string; token: () => string; host: string; threads: number; cacheDir: string }): StudioClient {
  let session: string | null = null;

  async function register(): Promise<RegisterWorkerResponse> {
    const res = await fetch(`${options.studioUrl}/internal/v1/workers`, {
      method: 'POST',
      headers: { Authorization: `Bearer ${options.token()}`, 'Content-Type': 'application/json' },
      body: JSON.stringify({ host: options.host, threads: options.threads }),
    });
    if (res.status === 401) throw new Error('the studio refused the worker token (it was rotated, or this is another studio\u2019s token)');
    if (res.status !== 201) throw new Error(`the studio answered ${res.status} to joining: ${(await res.text()).slice(0, 300)}`);
    const joined = (await res.json()) as RegisterWorkerResponse;
    session = joined.session;
    return joined;
  }

  async function download(image: ImageRef, signal: AbortSignal): Promise<Buffer> {
    for (let attempt = 0; ; attempt += 1) {
      const res = await fetch(`${options.studioUrl}/internal/v1/originals/${image.sha256}`, { headers: { Authorization: `Bearer ${session}` }, signal });
      if (res.status === 200) return Buffer.from(await res.arrayBuffer());
      // A lapsed session (or one ended by a token rotation): join again once, with the token as it is now.
      if (res.status === 401 && attempt === 0) {
        await register();
        continue;
      }
      throw new Error(`the studio answered ${res.status} for ${image.name}: ${(await res.text()).slice(0, 300)}`);
    }
  }

  return {
    register,
    async original(image, signal) {
      const file = path.join(options.cacheDir, image.sha256);
      if (await stat(file).then((s) => s.isFile(), () => false)) return file;
      const bytes = await download(image, signal);
      // The digest names the content: bytes that do not hash to it are not the original the task means.
      const digest = createHash('sha256').update(bytes).digest('hex');
      if (digest !== image.sha256) throw new Error(`the original of ${image.name} arrived damaged (SHA-256 ${digest})`);
      await mkdir(options.cacheDir, { recursive: true, mode: 0o700 });
      // Written aside and renamed: a worker stopped mid-write never leaves a partial file under the digest.
      const partial = `${file}.${randomBytes(6).toString('hex')}.partial`;
      try {
        await writeFile(partial, bytes, { mode: 0o600 });
        await rename(partial, file);
      } catch (err) {
        await unlink(partial).catch(() => undefined);
        throw err;
      }
      return file;
    },
  };
}
