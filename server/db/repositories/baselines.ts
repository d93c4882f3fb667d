import type { Executor } from './executor';

export type BaselineCodecName = 'jpeg' | 'webp' | 'avif';
export type ColorName = 'luma' | 'rgb';

export interface BaselinePointRecord {
  codec: BaselineCodecName;
  quality: number;
  bpp: number;
  mse: number;
  /** null when the decoded image is exact (PSNR = ∞). */
  psnr: number | null;
  ssim: number | null;
}

interface BaselineRow {
  codec: BaselineCodecName;
  quality: number;
  bpp: number;
  mse: number;
  psnr: number | null;
  ssim: number | null;
}

/** The reference codec cache: points depend only on the held-out list and the colour handling. */
export function baselinesRepository(db: Executor) {
  return {
    async count(heldOutHash: string, color: ColorName): Promise<number> {
      const row = (await db('baseline_points').where({ held_out_hash: heldOutHash, color }).count({ n: '*' }).first()) as { n: number | string } | undefined;
      return Number(row?.n ?? 0);
    },

    /** Codecs already cached for the list, so a later evaluation computes only what is missing. */
    async cachedCodecs(heldOutHash: string, color: ColorName): Promise<BaselineCodecName[]> {
      const rows = (await db('baseline_points').where({ held_out_hash: heldOutHash, color }).distinct('codec')) as { codec: BaselineCodecName }[];
      return rows.map((r) => r.codec);
    },

    /**
     * Inserts points that are not cached yet; a point another job wrote first is kept (INSERT IGNORE), since the same
     * images, codec and quality give the same measurement.
     */
    async insertMissing(heldOutHash: string, color: ColorName, points: BaselinePointRecord[]): Promise<void> {
      if (points.length === 0) return;
      await db('baseline_points')
        .insert(
          points.map((p) => ({
            held_out_hash: heldOutHash,
            color,
            codec: p.codec,
            quality: p.quality,
            bpp: p.bpp,
            mse: p.mse,
            psnr: p.psnr,
            ssim: p.ssim,
          })),
        )
        .onConflict(['held_out_hash', 'color', 'codec', 'quality'])
        .ignore();
    },

    /** Points ordered by codec, then quality. */
    async list(heldOutHash: string, color: ColorName): Promise<BaselinePointRecord[]> {
      const rows = (await db('baseline_points')
        .where({ held_out_hash: heldOutHash, color })
        .orderBy([{ column: 'codec' }, { column: 'quality' }])
        .select('codec', 'quality', 'bpp', 'mse', 'psnr', 'ssim')) as BaselineRow[];
      return rows.map((r) => ({
        codec: r.codec,
        quality: Number(r.quality),
        bpp: Number(r.bpp),
        mse: Number(r.mse),
        psnr: r.psnr === null ? null : Number(r.psnr),
        ssim: r.ssim === null ? null : Number(r.ssim),
      }));
    },
  };
}

export type BaselinesRepository = ReturnType<typeof baselinesRepository>;
