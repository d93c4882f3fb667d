import type { Knex } from 'knex';

/**
 * Reconstruction views computed once per codebook and image and kept: the figures here, the three PNGs in the content
 * store under their SHA-256 (which the store sweep treats as named while a row names them). A row goes with its
 * codebook or its image, and the sweep then frees the PNGs.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('reconstructions', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.integer('codebook_id').unsigned().notNullable().references('id').inTable('codebooks').onDelete('CASCADE');
    t.integer('image_id').unsigned().notNullable().references('id').inTable('images').onDelete('CASCADE');
    t.integer('width').unsigned().notNullable();
    t.integer('height').unsigned().notNullable();
    t.integer('encoded_bytes').unsigned().notNullable();
    t.double('bpp').notNullable();
    t.double('mse').notNullable();
    // NULL when the reconstruction is exact (PSNR = ∞), as in evaluation_images.
    t.double('psnr').nullable();
    // NULL when the image is smaller than the SSIM window.
    t.double('ssim').nullable();
    t.specificType('original_sha256', 'CHAR(64) CHARACTER SET ascii COLLATE ascii_bin').notNullable();
    t.specificType('reconstruction_sha256', 'CHAR(64) CHARACTER SET ascii COLLATE ascii_bin').notNullable();
    t.specificType('error_sha256', 'CHAR(64) CHARACTER SET ascii COLLATE ascii_bin').notNullable();
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.primary(['codebook_id', 'image_id']);
    t.index(['image_id'], 'reconstructions_image_index');
    // The sweep asks "does any row still name this object?" of each column.
    t.index(['original_sha256'], 'reconstructions_original_index');
    t.index(['reconstruction_sha256'], 'reconstructions_reconstruction_index');
    t.index(['error_sha256'], 'reconstructions_error_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('reconstructions');
}
