// node --import tsx scripts/migrate.ts latest | rollback [--all] | status
import knexFactory from 'knex';
import { loadConfig } from '../server/config';
import { buildKnexConfig } from '../server/db';

const usage = 'usage: migrate.ts latest | rollback [--all] | status';

async function run(): Promise<number> {
  const [command, ...flags] = process.argv.slice(2);
  if (!command || !['latest', 'rollback', 'status'].includes(command)) {
    process.stderr.write(`${usage}\n`);
    return 2;
  }
  const config = loadConfig({ ...process.env, JWT_SECRET: process.env.JWT_SECRET || 'x'.repeat(32) });
  const knex = knexFactory(buildKnexConfig(config.db, { min: 0, max: 1 }));
  try {
    if (command === 'latest') {
      const [, applied] = (await knex.migrate.latest()) as [number, string[]];
      process.stdout.write(applied.length ? `applied:\n  ${applied.join('\n  ')}\n` : 'already up to date\n');
    } else if (command === 'rollback') {
      const all = flags.includes('--all');
      const [, undone] = (await knex.migrate.rollback(undefined, all)) as [number, string[]];
      process.stdout.write(undone.length ? `rolled back:\n  ${undone.join('\n  ')}\n` : 'nothing to roll back\n');
    } else {
      const [done, pending] = (await knex.migrate.list()) as [{ name: string }[], { file: string }[] | string[]];
      process.stdout.write(`database ${config.db.database} on ${config.db.host}:${config.db.port}\n`);
      for (const m of done) process.stdout.write(`  applied  ${typeof m === 'string' ? m : m.name}\n`);
      for (const m of pending) process.stdout.write(`  pending  ${typeof m === 'string' ? m : m.file}\n`);
    }
    return 0;
  } catch (err) {
    process.stderr.write(`migrate ${command} failed: ${(err as Error).message}\n`);
    return 1;
  } finally {
    await knex.destroy();
  }
}

run().then((code) => process.exit(code));
