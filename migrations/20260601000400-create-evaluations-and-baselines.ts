import type { Knex } from 'knex';

/**
 * Measured results: one evaluation per codebook and held-out image list (its per-image rows beside it), and the
 * reference codec points, which depend only on the held-out list and the colour handling and so are computed once.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('evaluations', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('codebook_id').unsigned().notNullable().references('id').inTable('codebooks').onDelete('CASCADE');
    // SHA-256 of the sorted sha256s of the held-out images: the same list gives the same key whatever its order.
    t.specificType('held_out_hash', 'CHAR(64)').notNullable();
    // Pooled over the images: mse, psnr (null = ∞), ssim, bppFixed, bppEntropy, bppActual, pixels, bytes.
    t.json('overall').notNullable();
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.unique(['codebook_id', 'held_out_hash'], { indexName: 'evaluations_codebook_held_out_unique' });
    t.index(['held_out_hash'], 'evaluations_held_out_index');
  });
  await knex.schema.createTable('evaluation_images', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.integer('evaluation_id').unsigned().notNullable().references('id').inTable('evaluations').onDelete('CASCADE');
    t.integer('image_id').unsigned().notNullable().references('id').inTable('images').onDelete('CASCADE');
    t.double('mse').notNullable();
    // NULL when the reconstruction is exact (PSNR = ∞ has no SQL or JSON spelling).
    t.double('psnr').nullable();
    // NULL when the image is smaller than the 11×11 SSIM window.
    t.double('ssim').nullable();
    t.double('bpp_fixed').notNullable();
    t.double('bpp_entropy').notNullable();
    t.double('bpp_actual').notNullable();
    t.integer('container_bytes').unsigned().notNullable();
    t.primary(['evaluation_id', 'image_id']);
    t.index(['image_id'], 'evaluation_images_image_index');
  });
  await knex.schema.createTable('baseline_points', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.specificType('held_out_hash', 'CHAR(64)').notNullable();
    t.enum('color', ['luma', 'rgb']).notNullable();
    t.enum('codec', ['jpeg', 'webp', 'avif']).notNullable();
    t.tinyint('quality').unsigned().notNullable();
    t.double('bpp').notNullable();
    t.double('mse').notNullable();
    t.double('psnr').nullable();
    t.double('ssim').nullable();
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.unique(['held_out_hash', 'color', 'codec', 'quality'], { indexName: 'baseline_points_key_unique' });
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('baseline_points');
  await knex.schema.dropTable('evaluation_images');
  await knex.schema.dropTable('evaluations');
}
