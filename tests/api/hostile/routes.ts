// The one table of every API route, shared by the hostile-input properties and the access matrix.
// A route missing here is untested by both: tests/api/hostile/route-table.test.ts checks the table against
// the routers mounted in server/app.ts.
import type { ZodType } from 'zod';
import {
  reorderBody,
  acceptInvitationBody,
  anomalyJobBody,
  denoiseJobBody,
  changePasswordBody,
  createImageSetBody,
  createInvitationBody,
  createEvaluationBatchBody,
  createRunBody,
  approveReleaseBody,
  evaluateCodebookBody,
  proposeReleaseBody,
  returnReleaseBody,
  loginBody,
  passwordResetConfirmBody,
  passwordResetRequestBody,
  renameRunBody,
  signupCompleteBody,
  signupRequestBody,
  splitImageSetBody,
  updateImageBody,
  updateImageSetBody,
  updateMemberBody,
} from '../../../server/contracts';
import { codebookDocumentSchema } from '../../../server/engine';
import { addMember, type Session } from '../../helpers/api';
import { treeCodebookDocument } from '../../helpers/structure-documents';
import { codebookDocument, newImage, newInvitation, newInvitationToken, newModelJob, newProposal, newRun, newSet, newSignupToken, pngTile, runBody, type World } from './world';

/**
 * public: no session needed. session: any signed-in user. member/engineer/admin: the least team role
 * that may call it (viewer < engineer < admin).
 */
export type Access = 'public' | 'session' | 'member' | 'engineer' | 'admin';

export type BodyKind = 'none' | 'json' | 'multipart' | 'event-stream';

export interface RouteCase {
  name: string;
  method: 'GET' | 'POST' | 'PATCH' | 'DELETE';
  /** Express-style template; :teamId and the object ids are filled from the world or from fresh(). */
  path: string;
  access: Access;
  /** Status of a valid call by a caller who may make it. */
  ok: number;
  body: BodyKind;
  /** A valid JSON body (or multipart files). */
  valid?: (w: World) => unknown;
  /**
   * The zod schema the JSON body is validated with: the hostile-input test gives every field it names
   * (optional ones too) each JSON type the field does not accept.
   */
  schema?: ZodType;
  /** The most bytes the route's JSON parser takes, when not the API-wide jsonBodyLimit. */
  bodyLimit?: number;
  /**
   * A successful call ends sessions (sign-out; a password change ends the others): the tests make it with a
   * session of its own, never with the world's long-lived tokens.
   */
  revokesSessions?: boolean;
  /** A valid query string, without "?". */
  query?: (w: World) => string;
  /** Makes a fresh target for calls that consume it (deletes, cancels), before every call. */
  fresh?: (w: World) => Promise<Record<string, number | string>>;
  /** Whether the path names an object of the team (so a foreign team's member must get 404 for it). */
  objectScoped: boolean;
}

/**
 * The API-wide JSON body limit (express.json's '1mb' in server/app.ts, 1 MiB in its byte parser); a body past
 * a route's limit must be refused whatever the route.
 */
export const jsonBodyLimit = 1024 * 1024;

/** A queued batch of the world's codebook on its set (no runner here, so it stays queued). */
async function newBatch(w: World): Promise<number> {
  const batch = await w.t.composition.services.evaluation.requestBatch(w.teamId, w.engineer.user.id, { codebookIds: [w.codebookId], imageSetIds: [w.setId] });
  return batch.job.id;
}

/** One tree codebook per world (tests/helpers/structure-documents.ts), imported the first time a route asks. */
const worldTrees = new WeakMap<World, Promise<number>>();
function worldTree(w: World): Promise<number> {
  let id = worldTrees.get(w);
  if (!id) {
    id = w.t.composition.services.codebooks.import(w.teamId, w.engineer.user.id, treeCodebookDocument()).then((c) => c.id);
    worldTrees.set(w, id);
  }
  return id;
}

// A counter, not the clock: each test file has a database of its own, and the same run sends the same bodies.
let n = 0;
const unique = (p: string) => `${p} ${++n}`;

export const routes: RouteCase[] = [
  { name: 'health', method: 'GET', path: '/api/health', access: 'public', ok: 200, body: 'none', objectScoped: false },
  { name: 'API description', method: 'GET', path: '/api/openapi.json', access: 'public', ok: 200, body: 'none', objectScoped: false },
  { name: 'codebook JSON Schema', method: 'GET', path: '/api/schemas/codebook.schema.json', access: 'public', ok: 200, body: 'none', objectScoped: false },
  {
    name: 'sign up',
    method: 'POST',
    path: '/api/auth/signup',
    access: 'public',
    ok: 202,
    body: 'json',
    valid: () => ({ email: `s-${process.pid}-${++n}@example.test` }),
    schema: signupRequestBody,
    objectScoped: false,
  },
  {
    name: 'preview a sign-up link',
    method: 'GET',
    path: '/api/auth/signup/:token',
    access: 'public',
    ok: 200,
    body: 'none',
    fresh: async (w) => ({ token: await newSignupToken(w) }),
    objectScoped: false,
  },
  {
    name: 'finish signing up',
    method: 'POST',
    path: '/api/auth/signup/complete',
    access: 'public',
    // Only a mailed token makes it succeed; the table's valid body is well-formed but unknown.
    ok: 400,
    body: 'json',
    valid: () => ({ token: 'x'.repeat(43), password: 'correct-horse-battery', name: 'Signer', teamName: unique('Team') }),
    schema: signupCompleteBody,
    objectScoped: false,
  },
  {
    name: 'sign in',
    method: 'POST',
    path: '/api/auth/login',
    access: 'public',
    ok: 200,
    body: 'json',
    valid: (w) => ({ email: w.viewer.user.email, password: 'correct-horse-battery' }),
    schema: loginBody,
    objectScoped: false,
  },
  { name: 'sign out', method: 'POST', path: '/api/auth/logout', access: 'public', ok: 204, body: 'none', revokesSessions: true, objectScoped: false },
  {
    name: 'request a password reset',
    method: 'POST',
    path: '/api/auth/password-reset',
    access: 'public',
    ok: 202,
    body: 'json',
    valid: () => ({ email: `nobody-${++n}@example.test` }),
    schema: passwordResetRequestBody,
    objectScoped: false,
  },
  {
    name: 'confirm a password reset',
    method: 'POST',
    path: '/api/auth/password-reset/confirm',
    access: 'public',
    // Only a mailed token makes it succeed; the table's valid body is well-formed but unknown.
    ok: 400,
    body: 'json',
    valid: () => ({ token: 'x'.repeat(43), password: 'correct-horse-battery' }),
    schema: passwordResetConfirmBody,
    objectScoped: false,
  },
  { name: 'who am I', method: 'GET', path: '/api/me', access: 'session', ok: 200, body: 'none', objectScoped: false },
  {
    name: 'change my password',
    method: 'POST',
    path: '/api/me/password',
    access: 'session',
    // Only the caller's current password makes it succeed (and would change the world's passwords); the table's
    // body is well-formed but names a wrong current password.
    ok: 400,
    body: 'json',
    valid: () => ({ currentPassword: 'not-the-current-password', newPassword: 'another-good-passphrase' }),
    schema: changePasswordBody,
    objectScoped: false,
  },
  { name: 'preview an invitation', method: 'GET', path: '/api/invitations/:token', access: 'public', ok: 200, body: 'none', objectScoped: false },
  {
    name: 'accept an invitation',
    method: 'POST',
    path: '/api/invitations/:token/accept',
    access: 'public',
    ok: 200,
    body: 'json',
    valid: () => ({ name: 'Invitee', password: 'correct-horse-battery' }),
    schema: acceptInvitationBody,
    fresh: async (w) => ({ token: await newInvitationToken(w) }),
    objectScoped: false,
  },
  { name: 'list members', method: 'GET', path: '/api/teams/:teamId/members', access: 'member', ok: 200, body: 'none', objectScoped: false },
  {
    name: 'change a member role',
    method: 'PATCH',
    path: '/api/teams/:teamId/members/:userId',
    access: 'admin',
    ok: 200,
    body: 'json',
    valid: () => ({ role: 'viewer' }),
    schema: updateMemberBody,
    objectScoped: true,
  },
  {
    name: 'remove a member',
    method: 'DELETE',
    path: '/api/teams/:teamId/members/:userId',
    access: 'admin',
    ok: 204,
    body: 'none',
    fresh: async (w) => ({ userId: (await addMember(w.t, w.admin, 'viewer')).user.id }),
    objectScoped: true,
  },
  { name: 'list invitations', method: 'GET', path: '/api/teams/:teamId/invitations', access: 'admin', ok: 200, body: 'none', objectScoped: false },
  {
    name: 'invite',
    method: 'POST',
    path: '/api/teams/:teamId/invitations',
    access: 'admin',
    ok: 201,
    body: 'json',
    valid: () => ({ email: `i-${++n}@example.test`, role: 'viewer' }),
    schema: createInvitationBody,
    objectScoped: false,
  },
  {
    name: 'revoke an invitation',
    method: 'DELETE',
    path: '/api/teams/:teamId/invitations/:invitationId',
    access: 'admin',
    ok: 204,
    body: 'none',
    fresh: async (w) => ({ invitationId: (await newInvitation(w)).id }),
    objectScoped: true,
  },
  { name: 'read the outbox', method: 'GET', path: '/api/teams/:teamId/outbox', access: 'admin', ok: 200, body: 'none', objectScoped: false },
  { name: 'list compute workers', method: 'GET', path: '/api/teams/:teamId/workers', access: 'admin', ok: 200, body: 'none', objectScoped: false },
  { name: 'list image sets', method: 'GET', path: '/api/teams/:teamId/image-sets', access: 'member', ok: 200, body: 'none', objectScoped: false },
  {
    name: 'create an image set',
    method: 'POST',
    path: '/api/teams/:teamId/image-sets',
    access: 'engineer',
    ok: 201,
    body: 'json',
    valid: () => ({ name: unique('Set'), description: 'survey leg' }),
    schema: createImageSetBody,
    objectScoped: false,
  },
  { name: 'read an image set', method: 'GET', path: '/api/teams/:teamId/image-sets/:setId', access: 'member', ok: 200, body: 'none', objectScoped: true },
  {
    name: 'edit an image set',
    method: 'PATCH',
    path: '/api/teams/:teamId/image-sets/:setId',
    access: 'engineer',
    ok: 200,
    body: 'json',
    valid: () => ({ description: unique('notes') }),
    schema: updateImageSetBody,
    objectScoped: true,
  },
  {
    name: 'delete an image set',
    method: 'DELETE',
    path: '/api/teams/:teamId/image-sets/:setId',
    access: 'admin',
    ok: 204,
    body: 'none',
    fresh: async (w) => ({ setId: await newSet(w) }),
    objectScoped: true,
  },
  {
    name: 'upload images',
    method: 'POST',
    path: '/api/teams/:teamId/image-sets/:setId/images',
    access: 'engineer',
    ok: 201,
    body: 'multipart',
    valid: () => pngTile(7),
    objectScoped: true,
  },
  { name: 'list images', method: 'GET', path: '/api/teams/:teamId/image-sets/:setId/images', access: 'member', ok: 200, body: 'none', objectScoped: true },
  {
    name: 'split a set',
    method: 'POST',
    path: '/api/teams/:teamId/image-sets/:setId/split',
    access: 'engineer',
    ok: 200,
    body: 'json',
    valid: () => ({ heldOutFraction: 0.34, seed: 9 }),
    schema: splitImageSetBody,
    objectScoped: true,
  },
  { name: 'read an image', method: 'GET', path: '/api/teams/:teamId/images/:imageId', access: 'member', ok: 200, body: 'none', objectScoped: true },
  {
    name: 'change an image role',
    method: 'PATCH',
    path: '/api/teams/:teamId/images/:imageId',
    access: 'engineer',
    ok: 200,
    body: 'json',
    // Scratch images: the shared set's split must stay as the runs saw it.
    fresh: async (w) => ({ imageId: await newImage(w, w.setId) }),
    valid: () => ({ role: 'held-out' }),
    schema: updateImageBody,
    objectScoped: true,
  },
  {
    name: 'delete an image',
    method: 'DELETE',
    path: '/api/teams/:teamId/images/:imageId',
    access: 'admin',
    ok: 204,
    body: 'none',
    fresh: async (w) => ({ imageId: await newImage(w, await newSet(w)) }),
    objectScoped: true,
  },
  { name: 'thumbnail', method: 'GET', path: '/api/teams/:teamId/images/:imageId/thumbnail', access: 'member', ok: 200, body: 'none', objectScoped: true },
  { name: 'original', method: 'GET', path: '/api/teams/:teamId/images/:imageId/original', access: 'member', ok: 200, body: 'none', objectScoped: true },
  { name: 'list runs', method: 'GET', path: '/api/teams/:teamId/runs', access: 'member', ok: 200, body: 'none', objectScoped: false },
  {
    name: 'start a run',
    method: 'POST',
    path: '/api/teams/:teamId/runs',
    access: 'engineer',
    ok: 201,
    body: 'json',
    valid: (w) => runBody(w),
    schema: createRunBody,
    objectScoped: false,
  },
  { name: 'read a run', method: 'GET', path: '/api/teams/:teamId/runs/:runId', access: 'member', ok: 200, body: 'none', objectScoped: true },
  {
    name: 'cancel a run',
    method: 'POST',
    path: '/api/teams/:teamId/runs/:runId/cancel',
    access: 'engineer',
    ok: 200,
    body: 'none',
    fresh: async (w) => ({ runId: await newRun(w) }),
    objectScoped: true,
  },
  {
    name: 'rename a run',
    method: 'PATCH',
    path: '/api/teams/:teamId/runs/:runId',
    access: 'engineer',
    ok: 200,
    body: 'json',
    valid: () => ({ name: unique('Renamed run') }),
    schema: renameRunBody,
    objectScoped: true,
  },
  {
    // A fresh run is queued (no runner in these tests): deleting it takes its queued job with it.
    name: 'delete a run',
    method: 'DELETE',
    path: '/api/teams/:teamId/runs/:runId',
    access: 'admin',
    ok: 204,
    body: 'none',
    fresh: async (w) => ({ runId: await newRun(w) }),
    objectScoped: true,
  },
  { name: 'run events', method: 'GET', path: '/api/teams/:teamId/runs/:runId/events', access: 'member', ok: 200, body: 'event-stream', objectScoped: true },
  { name: 'run curve', method: 'GET', path: '/api/teams/:teamId/runs/:runId/curve', access: 'member', ok: 200, body: 'none', objectScoped: true },
  { name: 'run curve as CSV', method: 'GET', path: '/api/teams/:teamId/runs/:runId/curve', access: 'member', ok: 200, body: 'none', query: () => 'format=csv', objectScoped: true },
  { name: 'run metrics', method: 'GET', path: '/api/teams/:teamId/runs/:runId/metrics', access: 'member', ok: 200, body: 'none', objectScoped: true },
  { name: 'list codebooks', method: 'GET', path: '/api/teams/:teamId/codebooks', access: 'member', ok: 200, body: 'none', objectScoped: false },
  { name: 'read a codebook', method: 'GET', path: '/api/teams/:teamId/codebooks/:codebookId', access: 'member', ok: 200, body: 'none', objectScoped: true },
  { name: 'export a codebook', method: 'GET', path: '/api/teams/:teamId/codebooks/:codebookId/export', access: 'member', ok: 200, body: 'none', objectScoped: true },
  {
    name: 'export codewords as .npy',
    method: 'GET',
    path: '/api/teams/:teamId/codebooks/:codebookId/export',
    access: 'member',
    ok: 200,
    body: 'none',
    query: () => 'target=npy',
    objectScoped: true,
  },
  {
    name: 'import a codebook',
    method: 'POST',
    path: '/api/teams/:teamId/codebooks/import',
    access: 'engineer',
    ok: 201,
    body: 'json',
    valid: () => codebookDocument(++n),
    schema: codebookDocumentSchema,
    // express.json({ limit: '64mb' }) in server/http/routes/codebooks.ts.
    bodyLimit: 64 * 1024 * 1024,
    objectScoped: false,
  },
  {
    name: 'evaluate a codebook',
    method: 'POST',
    path: '/api/teams/:teamId/codebooks/:codebookId/evaluate',
    access: 'engineer',
    ok: 202,
    body: 'json',
    valid: (w) => ({ heldOutImageIds: w.imageIds.slice(0, 2) }),
    schema: evaluateCodebookBody,
    objectScoped: true,
  },
  { name: 'evaluation batches', method: 'GET', path: '/api/teams/:teamId/evaluation-batches', access: 'member', ok: 200, body: 'none', objectScoped: false },
  {
    name: 'evaluate a batch',
    method: 'POST',
    path: '/api/teams/:teamId/evaluation-batches',
    access: 'engineer',
    ok: 202,
    body: 'json',
    valid: (w) => ({ codebookIds: [w.codebookId], imageSetIds: [w.setId] }),
    schema: createEvaluationBatchBody,
    objectScoped: false,
  },
  { name: 'evaluation batch', method: 'GET', path: '/api/teams/:teamId/evaluation-batches/:jobId', access: 'member', ok: 200, body: 'none', fresh: async (w) => ({ jobId: await newBatch(w) }), objectScoped: true },
  { name: 'cancel an evaluation batch', method: 'POST', path: '/api/teams/:teamId/evaluation-batches/:jobId/cancel', access: 'engineer', ok: 200, body: 'none', fresh: async (w) => ({ jobId: await newBatch(w) }), objectScoped: true },
  {
    name: 'evaluation batch matrix',
    method: 'GET',
    path: '/api/teams/:teamId/evaluation-batches/:jobId/matrix',
    access: 'member',
    ok: 200,
    body: 'none',
    query: () => 'format=csv',
    fresh: async (w) => ({ jobId: await newBatch(w) }),
    objectScoped: true,
  },
  { name: 'codebook evaluations', method: 'GET', path: '/api/teams/:teamId/codebooks/:codebookId/evaluations', access: 'member', ok: 200, body: 'none', objectScoped: true },
  {
    name: 'reconstruction',
    method: 'GET',
    path: '/api/teams/:teamId/codebooks/:codebookId/reconstruction/:imageId',
    access: 'member',
    ok: 200,
    body: 'none',
    query: () => 'view=info',
    objectScoped: true,
  },
  {
    name: 'channel curve',
    method: 'GET',
    path: '/api/teams/:teamId/codebooks/:codebookId/channel',
    access: 'member',
    ok: 200,
    body: 'none',
    // The world's codebook is imported, so it has no held-out images of its own: the set is named.
    query: (w) => `setId=${w.setId}&ber=0.001,0.01&seeds=1`,
    objectScoped: true,
  },
  {
    name: 'reorder a codebook for the channel',
    method: 'POST',
    path: '/api/teams/:teamId/codebooks/:codebookId/reorder',
    access: 'engineer',
    ok: 201,
    body: 'json',
    valid: () => ({ ber: 0.01 }),
    schema: reorderBody,
    objectScoped: true,
  },
  {
    name: 'firmware rounding cost',
    method: 'GET',
    path: '/api/teams/:teamId/codebooks/:codebookId/firmware/rounding',
    access: 'member',
    ok: 200,
    body: 'none',
    // The world's codebook is imported, so it has no held-out images of its own: the set is named.
    query: (w) => `setId=${w.setId}`,
    objectScoped: true,
  },
  {
    name: 'firmware bundle as zip',
    method: 'GET',
    path: '/api/teams/:teamId/codebooks/:codebookId/firmware',
    access: 'member',
    ok: 200,
    body: 'none',
    objectScoped: true,
  },
  {
    name: 'start an anomaly job',
    method: 'POST',
    path: '/api/teams/:teamId/codebooks/:codebookId/anomaly-jobs',
    access: 'member',
    ok: 202,
    body: 'json',
    // The world's codebook is imported, so it has no held-out images of its own: the set is named.
    valid: (w) => ({ setId: w.setId, rate: 0.01, score: 'nll', limit: 5 }),
    schema: anomalyJobBody,
    objectScoped: true,
  },
  {
    name: 'start a denoise job',
    method: 'POST',
    path: '/api/teams/:teamId/codebooks/:codebookId/denoise-jobs',
    access: 'member',
    ok: 202,
    body: 'json',
    valid: (w) => ({ imageId: w.imageIds[0], sigma: 10, seed: 2, step: 4 }),
    schema: denoiseJobBody,
    objectScoped: true,
  },
  {
    name: 'find an earlier anomaly job',
    method: 'POST',
    path: '/api/teams/:teamId/codebooks/:codebookId/anomaly-jobs/find',
    access: 'member',
    ok: 200,
    body: 'json',
    valid: (w) => ({ setId: w.setId, rate: 0.01, score: 'nll', limit: 5 }),
    schema: anomalyJobBody,
    objectScoped: true,
  },
  {
    name: 'find an earlier denoise job',
    method: 'POST',
    path: '/api/teams/:teamId/codebooks/:codebookId/denoise-jobs/find',
    access: 'member',
    ok: 200,
    body: 'json',
    valid: (w) => ({ imageId: w.imageIds[0], sigma: 10, seed: 2, step: 4 }),
    schema: denoiseJobBody,
    objectScoped: true,
  },
  { name: 'read a model job', method: 'GET', path: '/api/teams/:teamId/model-jobs/:jobId', access: 'member', ok: 200, body: 'none', objectScoped: true },
  {
    name: 'cancel a model job',
    method: 'POST',
    path: '/api/teams/:teamId/model-jobs/:jobId/cancel',
    access: 'engineer',
    ok: 200,
    body: 'none',
    fresh: async (w) => ({ jobId: await newModelJob(w) }),
    objectScoped: true,
  },
  {
    name: 'a denoise job view',
    method: 'GET',
    path: '/api/teams/:teamId/model-jobs/:jobId/views/:view',
    access: 'member',
    ok: 200,
    body: 'none',
    fresh: async (w) => ({ jobId: w.denoisedJobId }),
    objectScoped: true,
  },
  {
    name: 'index map of an image as .npy',
    method: 'GET',
    path: '/api/teams/:teamId/codebooks/:codebookId/index-map/:imageId',
    access: 'member',
    ok: 200,
    body: 'none',
    objectScoped: true,
  },
  { name: 'codebook structure (levels or stages)', method: 'GET', path: '/api/teams/:teamId/codebooks/:codebookId/structure', access: 'member', ok: 200, body: 'none', objectScoped: true },
  {
    name: 'an image through a tree’s levels',
    method: 'GET',
    path: '/api/teams/:teamId/codebooks/:codebookId/reconstruction/:imageId/steps',
    access: 'member',
    ok: 200,
    body: 'none',
    // The world's codebook is flat (one table, no steps): a tree of the team is named instead.
    fresh: async (w) => ({ codebookId: await worldTree(w) }),
    objectScoped: true,
  },
  {
    name: 'compare runs',
    method: 'GET',
    path: '/api/teams/:teamId/compare',
    access: 'member',
    ok: 200,
    body: 'none',
    query: (w) => `runs=${w.runIds.join(',')}`,
    // The run ids in the query are the team's objects.
    objectScoped: true,
  },
  {
    name: 'download the Bjøntegaard table of a comparison',
    method: 'GET',
    path: '/api/teams/:teamId/compare/bd-table',
    access: 'member',
    ok: 200,
    body: 'none',
    query: (w) => `runs=${w.runIds.join(',')}&format=csv&method=cubic`,
    objectScoped: true,
  },
  { name: 'a codebook’s review', method: 'GET', path: '/api/teams/:teamId/codebooks/:codebookId/proposal', access: 'member', ok: 200, body: 'none', objectScoped: true },
  {
    // The world's codebook is already proposed (and never evaluated: no job runner here), so a valid proposal is
    // refused with 409 and changes nothing; tests/api/releases.test.ts proposes evaluated codebooks.
    name: 'propose a codebook for release',
    method: 'POST',
    path: '/api/teams/:teamId/codebooks/:codebookId/proposal',
    access: 'engineer',
    ok: 409,
    body: 'json',
    valid: () => ({ name: 'reef-luma', version: `1.0.${++n}`, note: 'Ready for the survey cameras' }),
    schema: proposeReleaseBody,
    objectScoped: true,
  },
  { name: 'list releases', method: 'GET', path: '/api/teams/:teamId/releases', access: 'member', ok: 200, body: 'none', objectScoped: false },
  { name: 'read a release', method: 'GET', path: '/api/teams/:teamId/releases/:releaseId', access: 'member', ok: 200, body: 'none', objectScoped: true },
  // The world's proposal is not released, so its report is refused with 409; tests/api/releases.test.ts reads one.
  { name: 'release report', method: 'GET', path: '/api/teams/:teamId/releases/:releaseId/report', access: 'member', ok: 409, body: 'none', objectScoped: true },
  {
    // Not evaluated, so approval is refused with 409 after every check of the caller (see world.ts).
    name: 'approve a release',
    method: 'POST',
    path: '/api/teams/:teamId/releases/:releaseId/approve',
    access: 'engineer',
    ok: 409,
    body: 'json',
    valid: () => ({ comment: 'Checked the worst tiles' }),
    schema: approveReleaseBody,
    objectScoped: true,
  },
  {
    name: 'return a proposal',
    method: 'POST',
    path: '/api/teams/:teamId/releases/:releaseId/return',
    access: 'engineer',
    ok: 200,
    body: 'json',
    valid: () => ({ comment: 'Evaluate it on the night set first' }),
    schema: returnReleaseBody,
    fresh: async (w) => ({ releaseId: await newProposal(w) }),
    objectScoped: true,
  },
  { name: 'activity log', method: 'GET', path: '/api/teams/:teamId/activity', access: 'member', ok: 200, body: 'none', query: () => 'limit=20&action=run.created', objectScoped: false },
];

/** The world's value for each path parameter. */
export function defaultParams(w: World): Record<string, number | string> {
  return {
    teamId: w.teamId,
    setId: w.setId,
    imageId: w.imageIds[0],
    runId: w.runIds[0],
    codebookId: w.codebookId,
    jobId: w.modelJobId,
    view: 'noisy',
    releaseId: w.releaseId,
    userId: w.spare.user.id,
    invitationId: 0,
    token: w.invitationToken,
  };
}

export function fillPath(template: string, params: Record<string, number | string>): string {
  return template.replace(/:([A-Za-z]+)/g, (_m, key: string) => {
    if (!(key in params)) throw new Error(`no value for :${key} in ${template}`);
    return encodeURIComponent(String(params[key]));
  });
}

export interface CallResult {
  status: number;
  contentType: string;
  text: string;
  json: unknown;
}

/**
 * Sends one request with fetch; an event stream is read only up to its headers and then dropped, since
 * a stream on a queued run never ends by itself.
 */
export async function call(
  w: World,
  route: Pick<RouteCase, 'method' | 'body'>,
  url: string,
  options: { token?: string; cookie?: string; json?: unknown; raw?: Buffer | string; contentType?: string; form?: FormData; headers?: Record<string, string> } = {},
): Promise<CallResult> {
  const headers: Record<string, string> = { ...(options.headers ?? {}) };
  if (options.token) headers.Authorization = `Bearer ${options.token}`;
  if (options.cookie) headers.Cookie = options.cookie;
  let body: BodyInit | undefined;
  if (options.form) body = options.form;
  else if (options.raw !== undefined) {
    body = typeof options.raw === 'string' ? options.raw : new Uint8Array(options.raw);
    headers['Content-Type'] = options.contentType ?? 'application/json';
  } else if (options.json !== undefined) {
    body = JSON.stringify(options.json);
    headers['Content-Type'] = 'application/json';
  }
  const controller = new AbortController();
  const res = await fetch(`${w.base}${url}`, { method: route.method, headers, body, signal: controller.signal });
  const contentType = res.headers.get('content-type') ?? '';
  if (contentType.startsWith('text/event-stream')) {
    controller.abort();
    return { status: res.status, contentType, text: '', json: null };
  }
  const text = await res.text();
  let json: unknown = null;
  if (contentType.includes('json')) {
    try {
      json = JSON.parse(text);
    } catch {
      json = undefined;
    }
  }
  return { status: res.status, contentType, text, json };
}

/** The API's error shape: `{ error: { code, message, details? } }` with a non-empty message. */
export function isErrorShape(json: unknown): boolean {
  if (!json || typeof json !== 'object') return false;
  const e = (json as { error?: unknown }).error as { code?: unknown; message?: unknown } | undefined;
  if (!e || typeof e !== 'object') return false;
  const keys = Object.keys(e).filter((k) => k !== 'details');
  return typeof e.code === 'string' && typeof e.message === 'string' && e.message.length > 0 && keys.every((k) => k === 'code' || k === 'message');
}

export async function multipartOf(route: RouteCase, w: World): Promise<FormData> {
  const form = new FormData();
  const png = (await route.valid!(w)) as Buffer;
  form.append('files', new Blob([new Uint8Array(png)], { type: 'image/png' }), 'tile.png');
  return form;
}

export type Identity = { label: string; token?: string; session?: Session };
