import type { Knex } from 'knex';

/**
 * Server-side sessions: the session JWT names its row by `jti` (RFC 7519 §4.1.7), and a request is
 * authenticated only while that row is live, so signing out or changing the password ends a token at once.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('sessions', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    // 16 random bytes in base64url (RFC 4648 §5): 22 characters.
    t.string('id', 64).notNullable().primary();
    t.integer('user_id').unsigned().notNullable().references('id').inTable('users').onDelete('CASCADE');
    t.datetime('created_at', { precision: 3 }).notNullable();
    t.datetime('expires_at', { precision: 3 }).notNullable();
    t.datetime('revoked_at', { precision: 3 }).nullable();
    t.datetime('last_seen_at', { precision: 3 }).nullable();
    t.index(['user_id', 'expires_at'], 'sessions_user_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('sessions');
}
