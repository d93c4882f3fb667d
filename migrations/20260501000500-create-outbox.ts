import type { Knex } from 'knex';

export async function up(knex: Knex): Promise<void> {
  await knex.schema.createTable('outbox_messages', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.bigIncrements('id').unsigned().primary();
    t.string('message_id', 255).nullable();
    t.string('envelope_from', 254).notNullable();
    t.json('envelope_to').notNullable();
    t.text('subject').notNullable();
    t.text('text', 'mediumtext').notNullable();
    t.text('html', 'mediumtext').nullable();
    t.specificType('raw', 'MEDIUMBLOB').notNullable();
    t.datetime('received_at', { precision: 3 }).notNullable().defaultTo(knex.raw('CURRENT_TIMESTAMP(3)'));
  });
  // One row per envelope recipient so "mail for this team's people" is an indexed join, not a JSON scan.
  await knex.schema.createTable('outbox_recipients', (t) => {
    t.engine('InnoDB');
    t.charset('utf8mb4');
    t.collate('utf8mb4_unicode_ci');
    t.bigInteger('message_id').unsigned().notNullable().references('id').inTable('outbox_messages').onDelete('CASCADE');
    t.string('address', 254).notNullable();
    t.primary(['message_id', 'address']);
    t.index(['address'], 'outbox_recipients_address_index');
  });
}

export async function down(knex: Knex): Promise<void> {
  await knex.schema.dropTable('outbox_recipients');
  await knex.schema.dropTable('outbox_messages');
}
