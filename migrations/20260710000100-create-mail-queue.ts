import type { Knex } from 'knex';

/**
 * Mail waits here until it is delivered: services write a row inside their own transaction, and the sender
 * (server/services/mail-queue.ts) delivers it after the commit, retrying with backoff. A rolled-back change
 * therefore sends nothing, and a slow SMTP host never holds a database transaction open.
 */
export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('mail_queue', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.bigIncrements('id').unsigned().primary();
    // The team whose action caused the mail (an invitation, a job notice); NULL for account mail (sign-up,
    // password reset), which belongs to no team and never shows in a team's Outbox.
    t.integer('team_id').unsigned().nullable().references('id').inTable('teams').onDelete('CASCADE');
    t.string('kind', 40).notNullable();
    t.string('recipient', 254).notNullable();
    t.string('subject', 500).notNullable();
    // Cleared once account mail is delivered or given up, so the table keeps no usable one-time link.
    t.text('text', 'mediumtext').nullable();
    t.text('html', 'mediumtext').nullable();
    t.enum('status', ['queued', 'sent', 'failed']).notNullable().defaultTo('queued');
    t.integer('attempts').unsigned().notNullable().defaultTo(0);
    // When the row may next be tried; a claimed row is pushed forward by a lease, so a sender that dies
    // mid-delivery leaves it to be tried again rather than lost.
    t.datetime('next_attempt_at', { precision: 3 }).notNullable();
    t.string('last_error', 500).nullable();
    t.datetime('created_at', { precision: 3 }).notNullable();
    t.datetime('sent_at', { precision: 3 }).nullable();
    t.index(['status', 'next_attempt_at'], 'mail_queue_due_index');
    t.index(['team_id', 'id'], 'mail_queue_team_index');
    t.index(['recipient', 'created_at'], 'mail_queue_recipient_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('mail_queue');
}
