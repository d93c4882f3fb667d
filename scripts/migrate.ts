// node --import tsx scripts/migrate.ts latest | rollback [--all] | status
import { loadConfig } from '../server/config';
import { withMigrator } from '../server/db/migrator';

const usage = 'usage: migrate.ts latest | rollback [--all] | status';

async function run(): Promise<number> {
  const [command, ...flags] = process.argv.slice(2);
  if (!command || !['latest', 'rollback', 'status'].includes(command)) {
    process.stderr.write(`${usage}\n`);
    return 2;
  }
  const config = loadConfig({ ...process.env, JWT_SECRET: process.env.JWT_SECRET || 'x'.repeat(32) });
  try {
    await withMigrator(config.db, async (m) => {
      if (command === 'latest') {
        const applied = await m.latest();
        process.stdout.write(applied.length ? `applied:\n  ${applied.join('\n  ')}\n` : 'already up to date\n');
      } else if (command === 'rollback') {
        const undone = await m.rollback(flags.includes('--all'));
        process.stdout.write(undone.length ? `rolled back:\n  ${undone.join('\n  ')}\n` : 'nothing to roll back\n');
      } else {
        const { applied, pending } = await m.status();
        process.stdout.write(`database ${config.db.database} on ${config.db.host}:${config.db.port}\n`);
        for (const m of applied) process.stdout.write(`  applied  ${m}\n`);
        for (const m of pending) process.stdout.write(`  pending  ${m}\n`);
      }
    });
    return 0;
  } catch (err) {
    process.stderr.write(`migrate ${command} failed: ${(err as Error).message}\n`);
    return 1;
  }
}

run().then((code) => process.exit(code));
