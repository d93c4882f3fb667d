import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('audit_log', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.bigIncrements('id').unsigned().primary();
    // The trail outlives the people and teams it mentions, so references go NULL instead of cascading.
    t.integer('team_id').unsigned().nullable().references('id').inTable('teams').onDelete('SET NULL');
    t.integer('actor_user_id').unsigned().nullable().references('id').inTable('users').onDelete('SET NULL');
    t.string('action', 64).notNullable();
    t.string('target_type', 32).nullable();
    t.string('target_id', 64).nullable();
    t.json('details').nullable();
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.index(['team_id', 'created_at'], 'audit_log_team_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('audit_log');
}
