import type { Knex } from 'knex';

/**
 * A job is taken under a lease: each attempt writes a fresh random token, and every later write of that attempt
 * (progress, heartbeat, the final commit) names it. Two processes that both believe they run a job (a redelivery
 * after a lost lock, a Redis that forgot) can then never both finish it: the row answers only to its current token.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.alterTable('jobs', (t) => {
    t.specificType('lease_token', 'CHAR(32)').nullable().after('attempts');
    // Which workers computed the job's tasks ([{ workerId, host }]), written with its results; shown on the run page.
    t.json('served_by').nullable().after('lease_token');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.alterTable('jobs', (t) => {
    t.dropColumn('served_by');
    t.dropColumn('lease_token');
  });
}
