import type { Knex } from 'knex';

/** The job kinds this migration adds to `jobs.kind`. */
const KINDS = ['anomaly', 'denoise'];

/**
 * The values of `jobs.kind` as the database has them now. Other migrations add kinds too; reading the column instead of
 * restating its list keeps each migration's change to its own values, whichever runs first.
 */
async function kindValues(knex: Knex): Promise<string[]> {
  const [rows] = (await knex.raw(
    "SELECT COLUMN_TYPE AS type FROM information_schema.COLUMNS WHERE TABLE_SCHEMA = DATABASE() AND TABLE_NAME = 'jobs' AND COLUMN_NAME = 'kind'",
  )) as [{ type: string }[]];
  return [...rows[0].type.matchAll(/'((?:[^']|'')*)'/g)].map((m) => m[1].replace(/''/g, "'"));
}

async function setKinds(knex: Knex, values: string[]): Promise<void> {
  await knex.raw(`ALTER TABLE jobs MODIFY kind ENUM(${values.map(() => '?').join(', ')}) NOT NULL`, values);
}

/**
 * Anomaly maps and denoising as tracked jobs: their kinds, and their results, written in the transaction that marks
 * the job succeeded and keyed by its id (a redelivered job finds its row and writes nothing twice). The figures are
 * JSON; the denoising views are PNG bytes in a table of their own, so a status read never loads them. Both go with
 * their job.
 */
export async function up(knex: Knex): Promise<void> {
  const current = await kindValues(knex);
  await setKinds(knex, [...current, ...KINDS.filter((k) => !current.includes(k))]);
  await knex.schema.createTable('model_results', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.integer('job_id').unsigned().notNullable().primary().references('id').inTable('jobs').onDelete('CASCADE');
    t.json('result').notNullable();
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
  });
  await knex.schema.createTable('model_result_views', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.integer('job_id').unsigned().notNullable().references('id').inTable('jobs').onDelete('CASCADE');
    t.string('view', 16).notNullable();
    t.specificType('png', 'LONGBLOB').notNullable();
    t.primary(['job_id', 'view']);
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('model_result_views');
  await knex.schema.dropTable('model_results');
  // Rows of the removed kinds could not stay in the narrower column.
  await knex('jobs').whereIn('kind', KINDS).delete();
  await setKinds(knex, (await kindValues(knex)).filter((k) => !KINDS.includes(k)));
}
