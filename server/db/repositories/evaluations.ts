import type { MeasuredFigures } from '../../engine';
import { iso, parseJson } from '../rows';
import { insertedId, type Executor } from './executor';

/**
 * Pooled results over a held-out list: MSE pooled over all pixel components, PSNR from that MSE (null = ∞),
 * SSIM the pixel-weighted mean of the images' SSIM, rates total bits over total pixels.
 */
/** A codebook's pooled figures on a held-out list, stored as the engine measured them (its one JSON form). */
export type EvaluationOverall = MeasuredFigures;

export interface EvaluationImageMetrics {
  imageId: number;
  mse: number;
  psnr: number | null;
  ssim: number | null;
  bppFixed: number;
  bppEntropy: number;
  bppActual: number;
  containerBytes: number;
}

export interface EvaluationRecord {
  id: number;
  codebookId: number;
  heldOutHash: string;
  overall: EvaluationOverall;
  createdAt: string;
}

export interface RunCurveRow {
  codebookId: number;
  bits: number;
  size: number;
  /** The codebook's structure kind (codebooks.structure) and λ when entropy-constrained. */
  structure: string;
  lambda: number | null;
  /** Bits of the coded block mean (0: no mean removal). */
  meanBits: number;
  /** For a tree, whether it is balanced (the document's structure.balanced); null for any other structure. */
  treeBalanced: boolean | null;
  overall: EvaluationOverall;
}

export interface RunImageMetricsRow extends EvaluationImageMetrics {
  codebookId: number;
  bits: number;
  size: number;
  fileName: string;
  width: number;
  height: number;
}

interface EvaluationRow {
  id: number;
  codebook_id: number;
  held_out_hash: string;
  overall: unknown;
  created_at: Date;
}

interface ImageMetricsRow {
  image_id: number;
  mse: number;
  psnr: number | null;
  ssim: number | null;
  bpp_fixed: number;
  bpp_entropy: number;
  bpp_actual: number;
  container_bytes: number;
}

const nullableNumber = (v: number | null) => (v === null ? null : Number(v));

const toMetrics = (r: ImageMetricsRow): EvaluationImageMetrics => ({
  imageId: r.image_id,
  mse: Number(r.mse),
  psnr: nullableNumber(r.psnr),
  ssim: nullableNumber(r.ssim),
  bppFixed: Number(r.bpp_fixed),
  bppEntropy: Number(r.bpp_entropy),
  bppActual: Number(r.bpp_actual),
  containerBytes: Number(r.container_bytes),
});

const toEvaluation = (r: EvaluationRow): EvaluationRecord => ({
  id: r.id,
  codebookId: r.codebook_id,
  heldOutHash: r.held_out_hash,
  overall: parseJson<EvaluationOverall>(r.overall)!,
  createdAt: iso(r.created_at),
});

export function evaluationsRepository(db: Executor) {
  return {
    /**
     * Writes a codebook's evaluation on one held-out list with all its image rows, replacing an earlier one for the
     * same list, so a job that ran again after a crash leaves exactly one. Call it inside a transaction.
     */
    async replace(codebookId: number, heldOutHash: string, overall: EvaluationOverall, images: EvaluationImageMetrics[]): Promise<number> {
      await db('evaluations').where({ codebook_id: codebookId, held_out_hash: heldOutHash }).delete();
      const id = insertedId(await db('evaluations').insert({ codebook_id: codebookId, held_out_hash: heldOutHash, overall: JSON.stringify(overall) }));
      if (images.length > 0) {
        await db('evaluation_images').insert(
          images.map((m) => ({
            evaluation_id: id,
            image_id: m.imageId,
            mse: m.mse,
            psnr: m.psnr,
            ssim: m.ssim,
            bpp_fixed: m.bppFixed,
            bpp_entropy: m.bppEntropy,
            bpp_actual: m.bppActual,
            container_bytes: m.containerBytes,
          })),
        );
      }
      return id;
    },

    async find(codebookId: number, heldOutHash: string): Promise<EvaluationRecord | null> {
      const row = (await db('evaluations').where({ codebook_id: codebookId, held_out_hash: heldOutHash }).first()) as EvaluationRow | undefined;
      return row ? toEvaluation(row) : null;
    },

    /** The evaluations of any of these codebooks on any of these lists (a batch's matrix), in one query. */
    async findAll(codebookIds: number[], heldOutHashes: string[]): Promise<EvaluationRecord[]> {
      if (codebookIds.length === 0 || heldOutHashes.length === 0) return [];
      const rows = (await db('evaluations').whereIn('codebook_id', codebookIds).whereIn('held_out_hash', heldOutHashes).orderBy('id')) as EvaluationRow[];
      return rows.map(toEvaluation);
    },

    async listForCodebook(codebookId: number): Promise<EvaluationRecord[]> {
      const rows = (await db('evaluations').where({ codebook_id: codebookId }).orderBy('id')) as EvaluationRow[];
      return rows.map(toEvaluation);
    },

    async imagesOf(evaluationId: number): Promise<EvaluationImageMetrics[]> {
      const rows = (await db('evaluation_images').where({ evaluation_id: evaluationId }).orderBy('image_id')) as ImageMetricsRow[];
      return rows.map(toMetrics);
    },

    /** The run's codebooks measured on `heldOutHash`, smallest first. */
    async curveOfRun(runId: number, heldOutHash: string): Promise<RunCurveRow[]> {
      const rows = (await db('evaluations as e')
        .join('codebooks as c', 'c.id', 'e.codebook_id')
        .where({ 'c.run_id': runId, 'e.held_out_hash': heldOutHash })
        .orderBy('c.size')
        // The tree's growth lives only in the document; one scalar of it is read, never the tree itself.
        .select('c.id as codebook_id', 'c.bits', 'c.size', 'c.structure', 'c.lambda', 'c.mean_bits', db.raw("JSON_VALUE(c.metadata, '$.structure.balanced') as tree_balanced"), 'e.overall')) as {
        codebook_id: number; bits: number; size: number; structure: string; lambda: number | null; mean_bits: number; tree_balanced: string | null; overall: unknown;
      }[];
      return rows.map((r) => ({
        codebookId: r.codebook_id, bits: r.bits, size: r.size, structure: r.structure, lambda: r.lambda, meanBits: r.mean_bits,
        // JSON_VALUE gives a JSON boolean as '1' / '0' (MariaDB 10.11), as 'true' / 'false' in other versions.
        treeBalanced: r.structure === 'tree' ? !['0', 'false'].includes(String(r.tree_balanced)) : null,
        overall: parseJson<EvaluationOverall>(r.overall)!,
      }));
    },

    /** Per-image rows of every codebook of the run on `heldOutHash`: by codebook size, then image id. */
    async imageMetricsOfRun(runId: number, heldOutHash: string): Promise<RunImageMetricsRow[]> {
      const rows = (await db('evaluation_images as m')
        .join('evaluations as e', 'e.id', 'm.evaluation_id')
        .join('codebooks as c', 'c.id', 'e.codebook_id')
        .join('images as i', 'i.id', 'm.image_id')
        .where({ 'c.run_id': runId, 'e.held_out_hash': heldOutHash })
        .orderBy([{ column: 'c.size' }, { column: 'm.image_id' }])
        .select('m.*', 'c.id as codebook_id', 'c.bits', 'c.size', 'i.file_name', 'i.width', 'i.height')) as (ImageMetricsRow & {
        codebook_id: number;
        bits: number;
        size: number;
        file_name: string;
        width: number;
        height: number;
      })[];
      return rows.map((r) => ({
        ...toMetrics(r),
        codebookId: r.codebook_id,
        bits: r.bits,
        size: r.size,
        fileName: r.file_name,
        width: r.width,
        height: r.height,
      }));
    },

    /** The most recent measurement of one image with one codebook, whichever held-out list it was part of. */
    async latestImageMetrics(codebookId: number, imageId: number): Promise<EvaluationImageMetrics | null> {
      const row = (await db('evaluation_images as m')
        .join('evaluations as e', 'e.id', 'm.evaluation_id')
        .where({ 'e.codebook_id': codebookId, 'm.image_id': imageId })
        .orderBy('e.id', 'desc')
        .select('m.*')
        .first()) as ImageMetricsRow | undefined;
      return row ? toMetrics(row) : null;
    },
  };
}

export type EvaluationsRepository = ReturnType<typeof evaluationsRepository>;

