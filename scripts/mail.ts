// The operator's view of captured mail: prints what the local capture server (FAKE_SMTP=true) stored.
//   npm run mail -- [--to ADDRESS] [--last N]
// Reads the database named by the same DB_* settings as the studio. No team role can read this: sign-up and
// reset links of every account are in it, so it is for whoever runs the installation.
import { pathToFileURL } from 'node:url';
import { loadConfig, type Config } from '../server/config';
import { createDatabase, type StoredMessage } from '../server/db';

const usage = 'usage: npm run mail -- [--to ADDRESS] [--last N]   (newest last; N defaults to 10)';

export interface MailQuery {
  to?: string;
  last: number;
}

export function parseMailArgs(argv: string[]): MailQuery | { error: string } | { help: true } {
  const query: MailQuery = { last: 10 };
  for (let i = 0; i < argv.length; i += 1) {
    const arg = argv[i];
    const value = argv[i + 1];
    if (arg === '--help' || arg === '-h') return { help: true };
    if (arg === '--to' && value && !value.startsWith('--')) {
      query.to = value.trim().toLowerCase();
      i += 1;
    } else if (arg === '--last' && value && /^[1-9][0-9]{0,3}$/.test(value)) {
      query.last = Number(value);
      i += 1;
    } else {
      return { error: `unexpected argument "${arg}"${arg === '--last' ? ' (a whole number from 1 to 9999)' : ''}` };
    }
  }
  return query;
}

/** The newest `last` captured messages (for one address when `to` is given), oldest first. */
export async function readCapturedMail(config: Pick<Config, 'db'>, query: MailQuery): Promise<StoredMessage[]> {
  const db = createDatabase(config.db, { min: 0, max: 1 });
  try {
    return (await db.repos.outbox.listRecent({ to: query.to, limit: query.last })).reverse();
  } finally {
    await db.destroy();
  }
}

export function formatMessage(m: StoredMessage): string {
  const when = m.receivedAt.slice(0, 19).replace('T', ' ');
  return [`── #${m.id}  ${when} UTC`, `From:    ${m.from}`, `To:      ${m.to.join(', ')}`, `Subject: ${m.subject}`, '', m.text.trimEnd(), ''].join('\n');
}

async function main(): Promise<number> {
  const parsed = parseMailArgs(process.argv.slice(2));
  if ('help' in parsed) {
    process.stdout.write(`${usage}\n`);
    return 0;
  }
  if ('error' in parsed) {
    process.stderr.write(`mail: ${parsed.error}\n${usage}\n`);
    return 2;
  }
  // No session is signed here; a placeholder keeps the configuration from creating a key file.
  const config = loadConfig({ ...process.env, JWT_SECRET: process.env.JWT_SECRET || 'x'.repeat(32) });
  try {
    const messages = await readCapturedMail(config, parsed);
    if (messages.length === 0) {
      process.stdout.write(
        `no captured mail${parsed.to ? ` for ${parsed.to}` : ''} in ${config.db.database} (mail is captured only while FAKE_SMTP=true)\n`,
      );
    }
    for (const m of messages) process.stdout.write(`${formatMessage(m)}\n`);
    return 0;
  } catch (err) {
    process.stderr.write(`mail: cannot read ${config.db.database} on ${config.db.host}:${config.db.port}: ${(err as Error).message}\n(is the studio, or \`npm run db -- start\`, running?)\n`);
    return 1;
  }
}

// Run as a command, not when imported (scripts/load.ts and the tests use the functions).
if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) void main().then((code) => process.exit(code));
