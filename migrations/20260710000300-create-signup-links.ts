import type { Knex } from 'knex';

/**
 * Sign-up proves the address first: POST /api/auth/signup mails a one-time link, and only its holder can
 * finish creating the account. Stored as the SHA-256 of the token, single-use and expiring, like resets.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('signup_links', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.string('email', 254).notNullable();
    t.specificType('token_hash', 'CHAR(64)').notNullable().unique('signup_links_token_hash_unique');
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.datetime('expires_at', { precision: 3 }).notNullable();
    t.datetime('used_at', { precision: 3 }).nullable();
    t.index(['email'], 'signup_links_email_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('signup_links');
}
