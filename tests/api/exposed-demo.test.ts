// A studio bound to every interface (HOST=0.0.0.0) must not open with the demo passwords the README publishes: it
// gives the demo accounts random ones and prints them once on stderr, outside the JSON log.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { demoAccounts } from '../../server/seed/demo';
import { startServer, type StartedServer } from '../helpers/server';

let server: StartedServer | undefined;

beforeAll(async () => {
  server = await startServer({ HOST: '0.0.0.0', LOG_LEVEL: 'info' });
});
afterAll(async () => {
  if (server) await server.stop().catch(() => undefined);
});

const signIn = (email: string, password: string) =>
  fetch(`${server!.url}/api/auth/login`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify({ email, password }) });

/** role, e-mail and password of each line of the console notice. */
function printedPasswords(output: string) {
  return [...output.matchAll(/^ {2}(admin|engineer|viewer) +(\S+@\S+) +([A-Za-z0-9_-]{20})$/gm)].map((m) => ({ role: m[1], email: m[2], password: m[3] }));
}

describe('demo accounts of a studio bound to 0.0.0.0', () => {
  it('prints a random password per demo account, which signs in where the published one does not', async () => {
    const printed = printedPasswords(server!.output());
    expect(printed.map((p) => p.email).sort()).toEqual(demoAccounts.map((a) => a.email).sort());
    for (const account of demoAccounts) {
      const given = printed.find((p) => p.email === account.email)!;
      expect(given.role).toBe(account.role);
      expect((await signIn(account.email, account.password)).status).toBe(401);
      expect((await signIn(account.email, given.password)).status).toBe(200);
    }
  });

  it('keeps the passwords out of every JSON log line', () => {
    const output = server!.output();
    const logLines = output.split('\n').filter((line) => line.startsWith('{'));
    expect(logLines.some((line) => line.includes('demo accounts got random passwords'))).toBe(true);
    for (const { password } of printedPasswords(output)) expect(logLines.filter((line) => line.includes(password))).toEqual([]);
  });

  it('prints them only once: a restart neither prints nor changes them', async () => {
    const [first] = printedPasswords(server!.output());
    await server!.terminate();
    await server!.restart();
    expect(printedPasswords(server!.output())).toHaveLength(demoAccounts.length);
    expect((await signIn(first.email, first.password)).status).toBe(200);
  });
});
