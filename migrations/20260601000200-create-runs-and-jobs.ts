import type { Knex } from 'knex';

const jobStates = ['queued', 'running', 'succeeded', 'failed', 'cancelled'];

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('runs', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('team_id').unsigned().notNullable().references('id').inTable('teams').onDelete('CASCADE');
    t.string('name', 120).notNullable();
    t.text('notes').nullable();
    // {submitted, normalized}: the body exactly as posted (so "run again" can resend it) and what the job runs.
    t.json('config').notNullable();
    t.integer('created_by').unsigned().nullable().references('id').inTable('users').onDelete('SET NULL');
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.enum('state', jobStates).notNullable().defaultTo('queued');
    t.text('error').nullable();
    t.specificType('held_out_hash', 'CHAR(64)').notNullable();
    t.datetime('finished_at', { precision: 3 }).nullable();
    t.index(['team_id', 'created_at'], 'runs_team_index');
    t.index(['held_out_hash'], 'runs_held_out_index');
  });
  await knex.schema.createTable('run_images', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.integer('run_id').unsigned().notNullable().references('id').inTable('runs').onDelete('CASCADE');
    // RESTRICT: a run's results are only meaningful while the images it was measured on still exist.
    t.integer('image_id').unsigned().notNullable().references('id').inTable('images').onDelete('RESTRICT');
    t.enum('role', ['training', 'held-out']).notNullable();
    t.primary(['run_id', 'image_id']);
    t.index(['image_id'], 'run_images_image_index');
  });
  await knex.schema.createTable('jobs', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('team_id').unsigned().notNullable().references('id').inTable('teams').onDelete('CASCADE');
    t.integer('run_id').unsigned().nullable().references('id').inTable('runs').onDelete('CASCADE');
    // The foreign key is added with the codebooks table (next migration).
    t.integer('codebook_id').unsigned().nullable();
    t.enum('kind', ['train', 'evaluate']).notNullable();
    t.enum('state', jobStates).notNullable().defaultTo('queued');
    // Job-specific input that is not a run (e.g. the image ids an imported codebook is evaluated on).
    t.json('payload').nullable();
    t.json('progress').nullable();
    t.text('error').nullable();
    t.integer('attempts').unsigned().notNullable().defaultTo(0);
    t.boolean('cancel_requested').notNullable().defaultTo(false);
    t.integer('created_by').unsigned().nullable().references('id').inTable('users').onDelete('SET NULL');
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.datetime('started_at', { precision: 3 }).nullable();
    t.datetime('finished_at', { precision: 3 }).nullable();
    t.datetime('heartbeat_at', { precision: 3 }).nullable();
    // The claim query scans queued jobs oldest first.
    t.index(['state', 'id'], 'jobs_state_index');
    t.index(['run_id'], 'jobs_run_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('jobs');
  await knex.schema.dropTable('run_images');
  await knex.schema.dropTable('runs');
}
