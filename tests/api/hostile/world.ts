// A populated studio for the hostile-input and access tests: two teams, every role, a removed member,
// images, queued runs and an imported codebook, served by the real app on a loopback port.
import type { AddressInfo } from 'node:net';
import type { Server } from 'node:http';
import jwt from 'jsonwebtoken';
import sharp from 'sharp';
import request from 'supertest';
import { makeCodebook, toCodebookDocument } from '../../../server/engine';
import { seabedSet } from '../../../server/seed/seabed-tiles';
import { addMember, bearer, createTestApp, signUp, type Session, type TestApp } from '../../helpers/api';
import { linkToken, waitForMail } from '../../helpers/mailbox';
import { snapshotter, type Snapshotter } from '../../helpers/snapshot';

export interface World {
  t: TestApp;
  /** http://127.0.0.1:port of the app listening in this process. */
  base: string;
  teamId: number;
  admin: Session;
  engineer: Session;
  viewer: Session;
  /** Was an engineer of the team, then removed by the admin; the account and its token still exist. */
  removed: Session;
  /** A viewer the admin may change the role of. */
  spare: Session;
  /** Admin of another team. */
  outsider: Session;
  /** An engineer of that other team: a member of another team who is not its admin. */
  foreignMember: Session;
  /** The app's DATA_DIR (content store, secrets). */
  dataDir: string;
  setId: number;
  imageIds: number[];
  /** Two queued runs (the job runner is never started here, so they stay queued). */
  runIds: [number, number];
  codebookId: number;
  /** A queued anomaly job of the team (the runner never starts, so it stays queued). */
  modelJobId: number;
  /** A denoise job of the team that has finished, with its views stored. */
  denoisedJobId: number;
  /** A proposal of that codebook for release by `removed` (not evaluated, so approving it is refused with 409). */
  releaseId: number;
  /** A pending invitation's raw token, as its e-mail carries it. */
  invitationToken: string;
  /** Ids of the outsider's own team and set, for the "own team id, foreign object id" probes. */
  outsiderTeamId: number;
  /** Signed with the server's key but expired a minute ago (RFC 7519 §4.1.4 exp). */
  expiredToken: string;
  /** Well-formed HS256 token for a real user, signed with a key the server does not hold. */
  foreignKeyToken: string;
  close(): Promise<void>;
}

export async function pngTile(seed: number, width = 32, height = 24): Promise<Buffer> {
  const [tile] = seabedSet(seed, 1, width, height);
  return sharp(Buffer.from(tile.rgb), { raw: { width: tile.width, height: tile.height, channels: 3 } }).png().toBuffer();
}

/** A valid codebook document: 4 codewords of a 4×4 luma patch. */
export function codebookDocument(seed = 1): ReturnType<typeof toCodebookDocument> {
  const size = 4;
  const dimension = 16;
  const codewords = new Float32Array(size * dimension);
  for (let i = 0; i < codewords.length; i += 1) codewords[i] = ((i * 37 + seed * 11) % 256) + 0.5;
  const codebook = makeCodebook({
    size,
    dimension,
    patch: { width: 4, height: 4, channels: 1, color: 'luma' },
    preprocessing: { kind: 'none' },
    codewords,
    usage: Uint32Array.from([5, 4, 3, 2]),
    training: { source: 'hand-made', vectorCount: 14, init: 'split', epsilon: 0.001, seed: 1, iterations: 1, distortion: 10, trace: [] },
  });
  return toCodebookDocument(codebook);
}

// Addresses from a counter, not the clock: every world has a database of its own, and the same run then
// sends the same bytes (a sign-in body carries the viewer's address).
let emailCounter = 0;
const worldEmail = (who: string) => `${who}-${++emailCounter}@reef.example.test`;

let setCounter = 0;
export async function newSet(w: Pick<World, 't' | 'teamId' | 'engineer'>, name = `Scratch ${process.pid}-${++setCounter}`): Promise<number> {
  const res = await request(w.t.app).post(`/api/teams/${w.teamId}/image-sets`).set(bearer(w.engineer)).send({ name });
  if (res.status !== 201) throw new Error(`set create failed: ${res.status} ${JSON.stringify(res.body)}`);
  return res.body.imageSet.id as number;
}

let imageSeed = 1000;
export async function newImage(w: Pick<World, 't' | 'teamId' | 'engineer'>, setId: number): Promise<number> {
  const res = await request(w.t.app)
    .post(`/api/teams/${w.teamId}/image-sets/${setId}/images`)
    .set(bearer(w.engineer))
    .attach('files', await pngTile(++imageSeed), `scratch-${imageSeed}.png`);
  if (res.status !== 201 || res.body.images.length !== 1) throw new Error(`upload failed: ${res.status} ${JSON.stringify(res.body)}`);
  return res.body.images[0].id as number;
}

/** A new queued anomaly job: a ranked list over the world's set with the world's (imported) codebook. */
export async function newModelJob(w: Pick<World, 't' | 'teamId' | 'engineer' | 'setId' | 'codebookId'>): Promise<number> {
  const res = await request(w.t.app).post(`/api/teams/${w.teamId}/codebooks/${w.codebookId}/anomaly-jobs`).set(bearer(w.engineer)).send({ setId: w.setId, limit: 5 });
  if (res.status !== 202) throw new Error(`anomaly job failed: ${res.status} ${JSON.stringify(res.body)}`);
  return res.body.job.id as number;
}

/**
 * A denoise job as the runner leaves it when it has succeeded: its row, result and views (the world never starts the
 * runner; the jobs' own tests run them for real, tests/api/codebook-model.test.ts).
 */
async function finishedDenoiseJob(w: Pick<World, 't' | 'teamId' | 'engineer' | 'codebookId'>, imageId: number): Promise<number> {
  const knex = w.t.db.knex;
  const payload = { imageId, sigma: 10, seed: 1, step: 4 };
  const [jobId] = await knex('jobs').insert({ team_id: w.teamId, codebook_id: w.codebookId, kind: 'denoise', state: 'succeeded', payload: JSON.stringify(payload), created_by: w.engineer.user.id });
  const png = await pngTile(7);
  const views = `/api/teams/${w.teamId}/model-jobs/${jobId}/views/`;
  const result = { type: 'denoise', codebookId: w.codebookId, width: 48, height: 32, ...payload, varianceSource: 'stored-distortion', psnr: { noisy: 28, hard: 27, mean: 29 }, views: { clean: `${views}clean`, noisy: `${views}noisy`, hard: `${views}hard`, mean: `${views}mean` }, caution: '' };
  await knex('model_results').insert({ job_id: jobId, result: JSON.stringify(result) });
  for (const view of ['clean', 'noisy', 'hard', 'mean']) await knex('model_result_views').insert({ job_id: jobId, view, png });
  return jobId as number;
}

export function runBody(w: Pick<World, 'setId'>, name = `Run ${++setCounter}`) {
  return { name, trainingSetId: w.setId, heldOutSetId: w.setId, patch: { width: 4, height: 4 }, bits: { from: 1, to: 2 }, maxIterations: 5, seed: 3 };
}

export async function newRun(w: Pick<World, 't' | 'teamId' | 'engineer' | 'setId'>): Promise<number> {
  const res = await request(w.t.app).post(`/api/teams/${w.teamId}/runs`).set(bearer(w.engineer)).send(runBody(w));
  if (res.status !== 201) throw new Error(`run create failed: ${res.status} ${JSON.stringify(res.body)}`);
  return res.body.run.id as number;
}

export async function newInvitation(w: Pick<World, 't' | 'teamId' | 'admin'>): Promise<{ id: number; email: string }> {
  const email = worldEmail('invitee');
  const res = await request(w.t.app).post(`/api/teams/${w.teamId}/invitations`).set(bearer(w.admin)).send({ email, role: 'viewer' });
  if (res.status !== 201) throw new Error(`invite failed: ${res.status} ${JSON.stringify(res.body)}`);
  return { id: res.body.invitation.id as number, email };
}

/** A new pending invitation's raw token, read from its e-mail. */
export async function newInvitationToken(w: Pick<World, 't' | 'teamId' | 'admin'>): Promise<string> {
  const invitation = await newInvitation(w);
  return linkToken(await waitForMail(w.t.db.knex, invitation.email, { subject: /invited/i }), 'invite').token;
}

/** A fresh sign-up link's raw token, read from its e-mail. */
export async function newSignupToken(w: Pick<World, 't'>): Promise<string> {
  const email = worldEmail('signer');
  const res = await request(w.t.app).post('/api/auth/signup').send({ email });
  if (res.status !== 202) throw new Error(`signup failed: ${res.status} ${JSON.stringify(res.body)}`);
  await w.t.composition.services.accounts.settle();
  return linkToken(await waitForMail(w.t.db.knex, email, { subject: /finish creating/i }), 'sign-up').token;
}

let releaseCounter = 0;

/**
 * A proposal written through the releases repository, as the service writes it, by someone who is none of the
 * world's callers (so every engineer and admin may review it). The service would refuse to propose a codebook that
 * was never evaluated, and the world has no job runner to evaluate one.
 */
async function proposeBy(t: TestApp, teamId: number, codebookId: number, userId: number): Promise<number> {
  const n = ++releaseCounter;
  const now = new Date();
  const id = await t.composition.db.repos.releases.insertProposal({ teamId, codebookId, name: `world-release-${n}`, version: `${n}`, note: 'Proposed for the world', proposedBy: userId, now });
  await t.composition.db.repos.releases.addComment({ releaseId: id, authorUserId: userId, kind: 'proposed', body: 'Proposed for the world', now });
  return id;
}

/** A fresh proposal of a freshly imported codebook, for calls that consume one (a return). */
export async function newProposal(w: Pick<World, 't' | 'teamId' | 'engineer' | 'removed'>): Promise<number> {
  const imported = await request(w.t.app).post(`/api/teams/${w.teamId}/codebooks/import`).set(bearer(w.engineer)).send(codebookDocument(1000 + releaseCounter));
  if (imported.status !== 201) throw new Error(`import failed: ${imported.status}`);
  return proposeBy(w.t, w.teamId, imported.body.codebook.id as number, w.removed.user.id);
}

export async function buildWorld(env: Record<string, string> = {}): Promise<World> {
  const t = await createTestApp(env);
  const admin = await signUp(t.app, { teamName: 'Reef Survey', email: worldEmail('admin') });
  const teamId = admin.teamId;
  const engineer = await addMember(t, admin, 'engineer', worldEmail('engineer'));
  const viewer = await addMember(t, admin, 'viewer', worldEmail('viewer'));
  const removed = await addMember(t, admin, 'engineer', worldEmail('engineer'));
  const spare = await addMember(t, admin, 'viewer', worldEmail('viewer'));
  const gone = await request(t.app).delete(`/api/teams/${teamId}/members/${removed.user.id}`).set(bearer(admin));
  if (gone.status !== 204) throw new Error(`member removal failed: ${gone.status}`);
  const outsider = await signUp(t.app, { teamName: 'Other Lab', email: worldEmail('outsider') });
  const foreignMember = await addMember(t, outsider, 'engineer', worldEmail('foreign'));

  const partial = { t, teamId, engineer, admin };
  const setId = await newSet(partial, 'Reef tiles');
  let upload = request(t.app).post(`/api/teams/${teamId}/image-sets/${setId}/images`).set(bearer(engineer));
  for (let i = 0; i < 6; i += 1) upload = upload.attach('files', await pngTile(40 + i, 48, 32), `reef-${i}.png`);
  const uploaded = await upload;
  if (uploaded.status !== 201) throw new Error(`upload failed: ${uploaded.status} ${JSON.stringify(uploaded.body)}`);
  const imageIds = (uploaded.body.images as { id: number }[]).map((i) => i.id);
  const split = await request(t.app).post(`/api/teams/${teamId}/image-sets/${setId}/split`).set(bearer(engineer)).send({ heldOutFraction: 0.34, seed: 9 });
  if (split.status !== 200) throw new Error(`split failed: ${split.status}`);

  const withSet = { ...partial, setId };
  const runIds: [number, number] = [await newRun(withSet), await newRun(withSet)];
  const imported = await request(t.app).post(`/api/teams/${teamId}/codebooks/import`).set(bearer(engineer)).send(codebookDocument());
  if (imported.status !== 201) throw new Error(`import failed: ${imported.status} ${JSON.stringify(imported.body)}`);
  const codebookId = imported.body.codebook.id as number;
  const modelJobId = await newModelJob({ t, teamId, engineer, setId, codebookId });
  const denoisedJobId = await finishedDenoiseJob({ t, teamId, engineer, codebookId }, imageIds[0]);

  const releaseId = await proposeBy(t, teamId, codebookId, removed.user.id);

  const invitationToken = await newInvitationToken({ t, teamId, admin });

  // Mail is sent after the response; let it land so later row counts are steady.
  await t.composition.services.accounts.settle();

  const secret = t.composition.config.jwt.secret;
  const now = Math.floor(Date.now() / 1000);
  // Both name live sessions, so only the expiry and the key make them fail.
  const jtiOf = (s: Session) => (jwt.decode(s.token) as { jti: string }).jti;
  const expiredToken = jwt.sign({ sub: String(engineer.user.id), jti: jtiOf(engineer), iat: now - 7200, exp: now - 60 }, secret, { algorithm: 'HS256', issuer: 'cellwright' });
  const foreignKeyToken = jwt.sign({ sub: String(admin.user.id), jti: jtiOf(admin) }, 'another-key-that-the-server-never-saw-0123456789', {
    algorithm: 'HS256',
    issuer: 'cellwright',
    expiresIn: 600,
  });

  const server: Server = await new Promise((resolve) => {
    const s = t.app.listen(0, '127.0.0.1', () => resolve(s));
  });
  const base = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;

  return {
    t,
    base,
    teamId,
    admin,
    engineer,
    viewer,
    removed,
    spare,
    outsider,
    foreignMember,
    dataDir: t.composition.config.dataDir,
    setId,
    imageIds,
    runIds,
    codebookId,
    modelJobId,
    denoisedJobId,
    releaseId,
    invitationToken,
    outsiderTeamId: outsider.teamId,
    expiredToken,
    foreignKeyToken,
    async close() {
      server.closeAllConnections();
      await new Promise<void>((resolve) => server.close(() => resolve()));
      await t.close();
    },
  };
}

/**
 * Columns (`table.column`) or tables (`table.*`) that change by design on requests the server refuses,
 * left out of world snapshots, each with its reason:
 * - sessions.last_seen_at: authentication notes when a session was last used (at most every 5 minutes), before
 *   a role check can refuse the request;
 * - outbox_messages, outbox_recipients: the local capture server's mailbox, filled after a commit by the mail
 *   sender, not by the request at hand (what a request queues shows in mail_queue).
 */
export const volatileColumns: readonly string[] = ['sessions.last_seen_at', 'outbox_messages.*', 'outbox_recipients.*'];

/** Snapshots of every row of the world's database and of its content store (tests/helpers/snapshot.ts). */
export function worldSnapshotter(w: Pick<World, 't' | 'dataDir'>): Promise<Snapshotter> {
  return snapshotter({ knex: w.t.db.knex, database: w.t.db.name, dataDir: w.dataDir, volatileColumns });
}

/**
 * A new account in the shape of `who`, for calls that end sessions (sign-out, password change), so the
 * world's long-lived tokens stay valid for every other test.
 */
export async function throwawaySession(
  w: Pick<World, 't' | 'admin' | 'outsider' | 'teamId'>,
  who: 'admin' | 'engineer' | 'viewer' | 'outsider' | 'foreign member' | 'removed member',
): Promise<Session> {
  if (who === 'outsider') return addMember(w.t, w.outsider, 'admin', worldEmail('throwaway'));
  if (who === 'foreign member') return addMember(w.t, w.outsider, 'engineer', worldEmail('throwaway'));
  const session = await addMember(w.t, w.admin, who === 'removed member' ? 'engineer' : who, worldEmail('throwaway'));
  if (who === 'removed member') {
    const gone = await request(w.t.app).delete(`/api/teams/${w.teamId}/members/${session.user.id}`).set(bearer(w.admin));
    if (gone.status !== 204) throw new Error(`member removal failed: ${gone.status}`);
  }
  return session;
}

/**
 * Row counts of every table of the app's database, in one round trip. The capture server's tables (outbox_*) are
 * left out: they are the recipients' mailbox, filled after a commit by the mail sender, not by the request at hand;
 * what a request queues shows in mail_queue.
 */
export async function rowCounts(w: Pick<World, 't'>): Promise<Record<string, number>> {
  const knex = w.t.db.knex;
  const tables = (await knex('information_schema.tables').where({ table_schema: w.t.db.name, table_type: 'BASE TABLE' }).select('table_name as name')) as {
    name: string;
  }[];
  const names = tables.map((r) => r.name).filter((n) => !n.startsWith('outbox_')).sort();
  const union = names.map(() => 'SELECT ? AS t, COUNT(*) AS n FROM ??').join(' UNION ALL ');
  const [rows] = (await knex.raw(union, names.flatMap((n) => [n, n]))) as [{ t: string; n: number }[]];
  return Object.fromEntries(rows.map((r) => [r.t, Number(r.n)]));
}
