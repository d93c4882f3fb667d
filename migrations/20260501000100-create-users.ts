import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('users', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    // 254 is the longest address SMTP can carry (RFC 5321 path limit, as corrected by RFC 3696 errata).
    t.string('email', 254).notNullable().unique('users_email_unique');
    t.string('name', 120).notNullable();
    t.string('password_hash', 100).notNullable();
    // Raised on password reset: every session token carrying an older value stops working.
    t.integer('token_version').unsigned().notNullable().defaultTo(0);
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.datetime('updated_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('users');
}
