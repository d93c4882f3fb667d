// The operator reads captured mail with `npm run mail` (scripts/mail.ts), from the database, on the machine:
// account mail that no team role may see is readable there, and only there.
import { execFile } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import request from 'supertest';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseMailArgs } from '../../scripts/mail';
import { createTestApp, signUp, uniqueEmail, type TestApp } from '../helpers/api';

const run = promisify(execFile);
const root = fileURLToPath(new URL('../..', import.meta.url));

let t: TestApp;
beforeAll(async () => {
  t = await createTestApp();
});
afterAll(async () => {
  await t?.close();
});

async function mailCommand(args: string[]) {
  const env = { ...process.env, DB_HOST: t.db.config.host, DB_PORT: String(t.db.config.port), DB_USER: t.db.config.user, DB_PASSWORD: t.db.config.password, DB_NAME: t.db.name };
  try {
    const { stdout, stderr } = await run(process.execPath, ['--import', 'tsx', 'scripts/mail.ts', ...args], { cwd: root, env, timeout: 60_000 });
    return { code: 0, stdout, stderr };
  } catch (err) {
    const e = err as { code: number; stdout: string; stderr: string };
    return { code: e.code, stdout: e.stdout, stderr: e.stderr };
  }
}

describe('npm run mail', () => {
  it("prints an address's captured mail, reset link included, newest last", async () => {
    const s = await signUp(t.app);
    await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    await t.composition.services.accounts.settle();
    const out = await mailCommand(['--to', s.user.email.toUpperCase(), '--last', '5']);
    expect(out.code).toBe(0);
    expect(out.stdout).toContain(`To:      ${s.user.email}`);
    const signupAt = out.stdout.indexOf('Subject: Finish creating your Cellwright account');
    const resetAt = out.stdout.indexOf('Subject: Reset your Cellwright password');
    expect(signupAt).toBeGreaterThanOrEqual(0);
    expect(resetAt).toBeGreaterThan(signupAt);
    expect(out.stdout).toMatch(/\/reset-password\/[A-Za-z0-9_-]{43}/);
  });

  it('limits the output to the last N messages and says so when there are none', async () => {
    const s = await signUp(t.app);
    await request(t.app).post('/api/auth/password-reset').send({ email: s.user.email });
    await t.composition.services.accounts.settle();
    const one = await mailCommand(['--to', s.user.email, '--last', '1']);
    expect(one.stdout.match(/^── #/gm)).toHaveLength(1);
    expect(one.stdout).toContain('Reset your Cellwright password');
    const none = await mailCommand(['--to', uniqueEmail('silent')]);
    expect(none.code).toBe(0);
    expect(none.stdout).toMatch(/^no captured mail for /);
  });

  it('refuses arguments it does not know with exit status 2 and the usage', async () => {
    const out = await mailCommand(['--last', 'many']);
    expect(out.code).toBe(2);
    expect(out.stderr).toContain('usage: npm run mail');
    expect(parseMailArgs(['--to', 'A@B.test', '--last', '3'])).toEqual({ to: 'a@b.test', last: 3 });
    expect(parseMailArgs(['--last', '0'])).toMatchObject({ error: expect.any(String) });
    expect(parseMailArgs(['--help'])).toEqual({ help: true });
  });
});
