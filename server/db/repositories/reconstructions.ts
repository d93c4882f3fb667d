import type { Executor } from './executor';

/** A codebook's reconstruction of one image: its figures, and the stored PNG of each view by SHA-256. */
export interface ReconstructionRecord {
  codebookId: number;
  imageId: number;
  width: number;
  height: number;
  encodedBytes: number;
  bpp: number;
  mse: number;
  /** null: exact reconstruction (PSNR = ∞). */
  psnr: number | null;
  /** null: the image is smaller than the SSIM window. */
  ssim: number | null;
  views: { original: string; reconstruction: string; error: string };
}

interface ReconstructionRow {
  codebook_id: number;
  image_id: number;
  width: number;
  height: number;
  encoded_bytes: number;
  bpp: number;
  mse: number;
  psnr: number | null;
  ssim: number | null;
  original_sha256: string;
  reconstruction_sha256: string;
  error_sha256: string;
}

const shaColumns = ['original_sha256', 'reconstruction_sha256', 'error_sha256'] as const;

const toRecord = (r: ReconstructionRow): ReconstructionRecord => ({
  codebookId: r.codebook_id,
  imageId: r.image_id,
  width: r.width,
  height: r.height,
  encodedBytes: r.encoded_bytes,
  bpp: r.bpp,
  mse: r.mse,
  psnr: r.psnr,
  ssim: r.ssim,
  views: { original: r.original_sha256, reconstruction: r.reconstruction_sha256, error: r.error_sha256 },
});

// Enough to keep an IN list far below MariaDB's packet limit, as in the images repository.
const slice = 500;

export function reconstructionsRepository(db: Executor) {
  return {
    /** The stored reconstruction, when both the codebook and the image are the team's (another team's ids find nothing). */
    async findForTeam(teamId: number, codebookId: number, imageId: number): Promise<ReconstructionRecord | null> {
      const row = (await db('reconstructions as r')
        .join('codebooks as c', 'c.id', 'r.codebook_id')
        .join('images as i', 'i.id', 'r.image_id')
        .where({ 'r.codebook_id': codebookId, 'r.image_id': imageId, 'c.team_id': teamId, 'i.team_id': teamId })
        .first('r.*')) as ReconstructionRow | undefined;
      return row ? toRecord(row) : null;
    },
    /** Records a computed reconstruction; one computed again (its files were lost) replaces the row. */
    async save(r: ReconstructionRecord): Promise<void> {
      await db('reconstructions')
        .insert({
          codebook_id: r.codebookId,
          image_id: r.imageId,
          width: r.width,
          height: r.height,
          encoded_bytes: r.encodedBytes,
          bpp: r.bpp,
          mse: r.mse,
          psnr: r.psnr,
          ssim: r.ssim,
          original_sha256: r.views.original,
          reconstruction_sha256: r.views.reconstruction,
          error_sha256: r.views.error,
        })
        .onConflict(['codebook_id', 'image_id'])
        .merge();
    },
    /** Which of these stored objects a reconstruction still names (the store sweep keeps those). */
    async referencedShas(sha256s: string[]): Promise<Set<string>> {
      const found = new Set<string>();
      for (let i = 0; i < sha256s.length; i += slice) {
        const shas = sha256s.slice(i, i + slice);
        for (const column of shaColumns) {
          const rows = (await db('reconstructions').whereIn(column, shas).distinct(column)) as Record<string, string>[];
          for (const r of rows) found.add(r[column]);
        }
      }
      return found;
    },
    /** How many reconstruction rows name this stored object, in any view. */
    async countBySha(sha256: string): Promise<number> {
      const row = (await db('reconstructions')
        .where('original_sha256', sha256)
        .orWhere('reconstruction_sha256', sha256)
        .orWhere('error_sha256', sha256)
        .count({ n: '*' })
        .first()) as { n: number | string } | undefined;
      return Number(row?.n ?? 0);
    },
  };
}
