import { randomBytes } from 'node:crypto';
import bcrypt from 'bcryptjs';
import { isLoopbackHost } from '../config/loopback';
import type { Role } from '../contracts';
import type { Database } from '../db';
import { recordAudit } from '../services/audit';

/** The invented demo scenario: a small team building a thumbnail codec for a low-bandwidth underwater survey link. */
export const demoTeamName = 'Bramblecove Seabed Survey (demo)';

/** The passwords here are published in the README: they are given only to a studio that listens on loopback. */
export const demoAccounts: readonly { email: string; password: string; name: string; role: Role }[] = [
  { email: 'ada@bramblecove.test', password: 'harbour-admin-1', name: 'Ada Ferrow', role: 'admin' },
  { email: 'tomas@bramblecove.test', password: 'harbour-engineer-1', name: 'Tomas Reyl', role: 'engineer' },
  { email: 'juno@bramblecove.test', password: 'harbour-viewer-1', name: 'Juno Marsh', role: 'viewer' },
];

export interface DemoSeedOptions {
  /** The address the server binds to (HOST): anything but loopback gets random passwords. */
  bindHost: string;
  hashPassword(password: string): Promise<string>;
}

/** A password given to a demo account instead of the published one; shown once to the operator, never stored. */
export interface DemoPassword {
  email: string;
  role: Role;
  password: string;
}

/** 15 random bytes: 120 bits, 20 base64url characters. */
const randomPassword = () => randomBytes(15).toString('base64url');

/**
 * Creates whatever part of the demo team is missing; running it again changes nothing. Existing accounts keep
 * their passwords. A studio reachable from other machines gets random passwords, returned so they can be shown
 * once; on loopback the published ones.
 */
export async function seedDemo(db: Database, options: DemoSeedOptions): Promise<{ teamId: number; created: number; passwords: DemoPassword[] }> {
  const published = isLoopbackHost(options.bindHost);
  const chosen = new Map<string, { password: string; hash: string }>();
  for (const a of demoAccounts) {
    if (await db.repos.users.findByEmail(a.email)) continue;
    const password = published ? a.password : randomPassword();
    chosen.set(a.email, { password, hash: await options.hashPassword(password) });
  }
  return db.transaction(async (tx) => {
    let created = 0;
    const passwords: DemoPassword[] = [];
    const team = (await tx.teams.findByName(demoTeamName)) ?? (await tx.teams.create(demoTeamName));
    for (const a of demoAccounts) {
      let user = await tx.users.findByEmail(a.email);
      if (!user) {
        // Created between the look-up above and this transaction: hashed here instead.
        const pick = chosen.get(a.email) ?? { password: published ? a.password : randomPassword(), hash: '' };
        const passwordHash = pick.hash || (await options.hashPassword(pick.password));
        user = await tx.users.create({ email: a.email, name: a.name, passwordHash });
        created += 1;
        if (!published) passwords.push({ email: a.email, role: a.role, password: pick.password });
      }
      if (!(await tx.memberships.find(team.id, user.id))) {
        await tx.memberships.create({ teamId: team.id, userId: user.id, role: a.role });
      }
    }
    if (created > 0) {
      await recordAudit(tx, { teamId: team.id, actorUserId: null, action: 'team.created', targetType: 'team', targetId: team.id, details: { name: team.name, seeded: true } });
    }
    return { teamId: team.id, created, passwords };
  });
}

/**
 * For a studio reachable from other machines: a demo account that still has its published password (seeded
 * earlier, when the studio listened on loopback) gets a random one, which also ends its sessions. Returns the new
 * passwords, to be shown once; on loopback it does nothing.
 */
export async function replacePublishedDemoPasswords(db: Database, options: DemoSeedOptions): Promise<DemoPassword[]> {
  if (isLoopbackHost(options.bindHost)) return [];
  const replaced: DemoPassword[] = [];
  for (const a of demoAccounts) {
    const user = await db.repos.users.findByEmail(a.email);
    // bcrypt hashes carry their own salt and cost, so the published password is checked as sign-in would check it.
    if (!user || !(await bcrypt.compare(a.password, user.passwordHash))) continue;
    const password = randomPassword();
    await db.repos.users.setPassword(user.id, await options.hashPassword(password));
    replaced.push({ email: a.email, role: a.role, password });
  }
  return replaced;
}

/** The text shown once on the console for passwords given to demo accounts. */
export function demoPasswordNotice(passwords: readonly DemoPassword[], bindHost: string): string {
  const width = Math.max(...passwords.map((p) => p.email.length));
  const lines = passwords.map((p) => `  ${p.role.padEnd(8)} ${p.email.padEnd(width)}  ${p.password}`);
  return [
    `Cellwright listens on ${bindHost}, which is not a loopback address, so the demo accounts do not use the published`,
    'passwords. Their passwords, shown this once and stored nowhere but as bcrypt hashes:',
    ...lines,
    '',
  ].join('\n');
}
