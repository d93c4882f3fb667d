import type { Knex } from 'knex';

/**
 * Review and release of codebooks. One `releases` row per codebook carries its review from proposal to release
 * (state proposed → approved | returned → proposed …); `release_comments` is the thread of that review, one entry per
 * proposal, return and approval. Once approved the row pins what was reviewed: the codeword checksum, the held-out
 * hash and the evaluation row. Both of those references are RESTRICT, so no cascade (a run's deletion, an evaluation
 * replaced by a later job) can take a released codebook or its figures away underneath the release; the services
 * refuse those paths with 409 first and say why.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('releases', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('team_id').unsigned().notNullable().references('id').inTable('teams').onDelete('CASCADE');
    t.integer('codebook_id').unsigned().notNullable().unique('releases_codebook_unique');
    t.foreign('codebook_id', 'releases_codebook_foreign').references('id').inTable('codebooks').onDelete('RESTRICT');
    t.string('state', 16).notNullable();
    // utf8mb4_bin so "Edge-Cam" and "edge-cam" are one name only if spelt the same; names are lower-case slugs anyway.
    t.string('name', 64).notNullable().collate('utf8mb4_bin');
    t.string('version', 32).notNullable().collate('utf8mb4_bin');
    t.text('note').notNullable();
    t.integer('proposed_by').unsigned().nullable().references('id').inTable('users').onDelete('SET NULL');
    t.datetime('proposed_at', { precision: 3 }).notNullable();
    t.integer('reviewed_by').unsigned().nullable().references('id').inTable('users').onDelete('SET NULL');
    t.datetime('reviewed_at', { precision: 3 }).nullable();
    t.specificType('checksum', 'CHAR(64)').nullable();
    t.specificType('held_out_hash', 'CHAR(64)').nullable();
    t.integer('evaluation_id').unsigned().nullable();
    t.foreign('evaluation_id', 'releases_evaluation_foreign').references('id').inTable('evaluations').onDelete('RESTRICT');
    t.datetime('released_at', { precision: 3 }).nullable();
    t.unique(['team_id', 'name', 'version'], { indexName: 'releases_team_name_version_unique' });
    t.index(['team_id', 'state'], 'releases_team_state_index');
  });
  await knex.schema.createTable('release_comments', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('release_id').unsigned().notNullable().references('id').inTable('releases').onDelete('CASCADE');
    t.integer('author_user_id').unsigned().nullable().references('id').inTable('users').onDelete('SET NULL');
    t.string('kind', 16).notNullable();
    t.text('body').notNullable();
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.index(['release_id', 'id'], 'release_comments_release_index');
  });
  // The activity log is read by person, action and object, newest first, within a team.
  await knex.schema.alterTable('audit_log', (t) => {
    t.index(['team_id', 'actor_user_id', 'id'], 'audit_log_team_actor_index');
    t.index(['team_id', 'target_type', 'target_id', 'id'], 'audit_log_team_target_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('audit_log', (t) => {
    t.dropIndex([], 'audit_log_team_target_index');
    t.dropIndex([], 'audit_log_team_actor_index');
  });
  await knex.schema.dropTable('release_comments');
  await knex.schema.dropTable('releases');
}
