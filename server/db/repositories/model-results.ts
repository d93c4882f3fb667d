import { parseJson } from '../rows';
import type { Executor } from './executor';

/**
 * What an anomaly or denoise job produced, keyed by its job: the figures as JSON (the contract's result, without the
 * views' bytes) and each denoising view's PNG.
 */
export function modelResultsRepository(db: Executor) {
  return {
    /** Written with the job's success; a second write for the same job (a redelivery) changes nothing. */
    async insert(jobId: number, result: Record<string, unknown>, views: Record<string, Uint8Array> = {}): Promise<void> {
      await db('model_results').insert({ job_id: jobId, result: JSON.stringify(result) }).onConflict('job_id').ignore();
      for (const [view, png] of Object.entries(views)) {
        await db('model_result_views').insert({ job_id: jobId, view, png: Buffer.from(png.buffer, png.byteOffset, png.byteLength) }).onConflict(['job_id', 'view']).ignore();
      }
    },
    async find(jobId: number): Promise<Record<string, unknown> | null> {
      const row = (await db('model_results').where({ job_id: jobId }).first('result')) as { result: unknown } | undefined;
      return row ? parseJson<Record<string, unknown>>(row.result) : null;
    },
    async view(jobId: number, view: string): Promise<Buffer | null> {
      const row = (await db('model_result_views').where({ job_id: jobId, view }).first('png')) as { png: Buffer } | undefined;
      return row ? row.png : null;
    },
  };
}
