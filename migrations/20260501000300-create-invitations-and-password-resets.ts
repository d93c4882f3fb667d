import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('invitations', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('team_id').unsigned().notNullable().references('id').inTable('teams').onDelete('CASCADE');
    t.string('email', 254).notNullable();
    t.enum('role', ['admin', 'engineer', 'viewer']).notNullable();
    // SHA-256 of the one-time token, hex; the token itself exists only in the e-mail.
    t.specificType('token_hash', 'CHAR(64)').notNullable().unique('invitations_token_hash_unique');
    // The inviter may leave later; the invitation stays valid and shows no name.
    t.integer('invited_by').unsigned().nullable().references('id').inTable('users').onDelete('SET NULL');
    t.integer('accepted_by').unsigned().nullable().references('id').inTable('users').onDelete('SET NULL');
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.datetime('expires_at', { precision: 3 }).notNullable();
    t.datetime('accepted_at', { precision: 3 }).nullable();
    t.datetime('revoked_at', { precision: 3 }).nullable();
    t.index(['team_id', 'created_at'], 'invitations_team_index');
    t.index(['email'], 'invitations_email_index');
  });
  await knex.schema.createTable('password_resets', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.increments('id').unsigned().primary();
    t.integer('user_id').unsigned().notNullable().references('id').inTable('users').onDelete('CASCADE');
    t.specificType('token_hash', 'CHAR(64)').notNullable().unique('password_resets_token_hash_unique');
    t.datetime('created_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
    t.datetime('expires_at', { precision: 3 }).notNullable();
    t.datetime('used_at', { precision: 3 }).nullable();
    t.index(['user_id'], 'password_resets_user_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('password_resets');
  await knex.schema.dropTable('invitations');
}
