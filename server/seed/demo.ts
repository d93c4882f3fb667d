import type { Role } from '../contracts';
import type { Database } from '../db';
import { recordAudit } from '../services/audit';

/** The invented demo scenario: a small team building a thumbnail codec for a low-bandwidth underwater survey link. */
export const demoTeamName = 'Tidewater Survey Link';

export const demoAccounts: readonly { email: string; password: string; name: string; role: Role }[] = [
  { email: 'ada@tidewater.test', password: 'harbour-admin-1', name: 'Ada Ferrow', role: 'admin' },
  { email: 'tomas@tidewater.test', password: 'harbour-engineer-1', name: 'Tomas Reyl', role: 'engineer' },
  { email: 'juno@tidewater.test', password: 'harbour-viewer-1', name: 'Juno Marsh', role: 'viewer' },
];

/**
 * Creates whatever part of the demo team is missing; running it again changes nothing.
 * Existing accounts keep their passwords.
 */
export async function seedDemo(db: Database, hashPassword: (p: string) => Promise<string>): Promise<{ teamId: number; created: number }> {
  const hashes = new Map<string, string>();
  for (const a of demoAccounts) {
    if (!(await db.repos.users.findByEmail(a.email))) hashes.set(a.email, await hashPassword(a.password));
  }
  return db.transaction(async (tx) => {
    let created = 0;
    const team = (await tx.teams.findByName(demoTeamName)) ?? (await tx.teams.create(demoTeamName));
    for (const a of demoAccounts) {
      let user = await tx.users.findByEmail(a.email);
      if (!user) {
        const passwordHash = hashes.get(a.email) ?? (await hashPassword(a.password));
        user = await tx.users.create({ email: a.email, name: a.name, passwordHash });
        created += 1;
      }
      if (!(await tx.memberships.find(team.id, user.id))) {
        await tx.memberships.create({ teamId: team.id, userId: user.id, role: a.role });
      }
    }
    if (created > 0) {
      await recordAudit(tx, { teamId: team.id, actorUserId: null, action: 'team.created', targetType: 'team', targetId: team.id, details: { name: team.name, seeded: true } });
    }
    return { teamId: team.id, created };
  });
}
