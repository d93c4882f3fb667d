import type { z } from 'zod';
import { codebookStructureResponse, structureStepsQuery, structureStepsResponse } from '../../contracts/codebook-structure';
import {
  bdTableQuery, bdTableResponse, exportCodebookQuery, indexMapQuery,
  anomalyJobBody, denoiseJobBody, modelJobLookupResponse, modelJobParams, modelJobResponse, modelJobViewParams,
  channelQuery, channelResponse, firmwareQuery, reorderBody, reorderResponse, roundingQuery, roundingResponse,
  acceptedResponse,
  activityQuery,
  activityResponse,
  approveReleaseBody,
  codebookProposalResponse,
  proposalParams,
  proposeReleaseBody,
  releaseParams,
  releaseReportResponse,
  releaseResponse,
  releasesResponse,
  returnReleaseBody,
  acceptInvitationBody,
  acceptInvitationResponse,
  changePasswordBody,
  codebookEvaluationsResponse,
  codebookParams,
  codebookResponse,
  codebooksResponse,
  compareQuery,
  compareResponse,
  createImageSetBody,
  createInvitationBody,
  createRunBody,
  evaluateCodebookBody,
  evaluateCodebookParams,
  evaluateCodebookResponse,
  exportFormatQuery,
  healthResponse,
  imageParams,
  imageResponse,
  imageSetParams,
  imageSetResponse,
  imageSetsResponse,
  imagesResponse,
  importCodebookQuery,
  invitationParams,
  invitationPreview,
  invitationResponse,
  invitationsResponse,
  invitationTokenParams,
  listImagesQuery,
  loginBody,
  loginResponse,
  memberParams,
  memberResponse,
  membersResponse,
  meResponse,
  openApiDocumentResponse,
  originalParams,
  outboxResponse,
  passwordResetConfirmBody,
  passwordResetRequestBody,
  reconstructionInfo,
  reconstructionParams,
  reconstructionQuery,
  registerWorkerBody,
  registerWorkerResponse,
  renameRunBody,
  runCurveResponse,
  runMetricsResponse,
  runParams,
  runResponse,
  runResultParams,
  runsResponse,
  signupCompleteBody,
  signupLinkParams,
  signupLinkPreview,
  signupRequestBody,
  signupResponse,
  splitImageSetBody,
  splitResponse,
  teamParams,
  updateImageBody,
  updateImageSetBody,
  updateMemberBody,
  uploadResponse,
  workersResponse,
} from '../../contracts';
import {
  createEvaluationBatchBody,
  evaluationBatchesResponse,
  evaluationBatchListParams,
  evaluationBatchParams,
  evaluationBatchResponse,
} from '../../contracts/evaluation-batches';

/**
 * Who may call a route. public: anyone; optional-session: anyone, and a signed-in caller is recognised;
 * session: any signed-in user; member / engineer / admin: the least team role (viewer < engineer < admin);
 * worker: a compute worker's own Bearer credential (never a user's session).
 */
export type Access = 'public' | 'optional-session' | 'session' | 'member' | 'engineer' | 'admin' | 'worker';

/** The JSON Schema document the API serves itself (GET /api/schemas/…), referenced rather than copied. */
export type SchemaRef = { ref: 'codebook' };

/** A body of one media type: JSON by its zod contract or a served schema, a JSON object described elsewhere, bytes or text. */
export type Content = z.ZodType | SchemaRef | 'binary' | 'text' | 'object';

export interface ResponseDescription {
  description: string;
  content?: Partial<Record<string, Content>>;
}

export interface RouteDescription {
  method: 'get' | 'post' | 'patch' | 'delete';
  /** Express form, as mounted (server/app.ts prefix + the router's path). */
  path: string;
  tag: string;
  summary: string;
  access: Access;
  /** The very objects the route hands to validate(); the test compares them with the mounted middleware. */
  input?: { params?: z.ZodType; query?: z.ZodType; body?: z.ZodType };
  /** A body the route reads other than by validate(): the multipart upload or the codebook document. */
  rawBody?: { mediaType: 'multipart/form-data' | 'application/json'; content: Content; description: string };
  /** Its router reads a JSON body for every route, whether or not this one takes input (the anonymous account routes). */
  readsJsonBody?: boolean;
  /** Checked inside the handler, after the worker's credential (internal routes only). */
  validatedInside?: boolean;
  /** Success responses by status. The 4xx ones are added from access and input (description/openapi.ts). */
  responses: Record<number, ResponseDescription>;
  /** 4xx statuses beyond those that follow from access and input: 409, 410, 429 … with why. */
  errors?: Record<number, string>;
}

const json = (schema: Content, description: string): ResponseDescription => ({ description, content: { 'application/json': schema } });
const noContent: ResponseDescription = { description: 'Done; no body' };
const codebookDocument: SchemaRef = { ref: 'codebook' };
const csvOrJson = (schema: z.ZodType, what: string): ResponseDescription => ({
  description: `${what}: JSON, or CSV with format=csv (an attachment)`,
  content: { 'application/json': schema, 'text/csv': 'text' },
});
const frozen = 'The codebook is released and frozen';
const tooManyAttempts = { 429: 'Too many attempts from this network address; Retry-After says when to try again' };

const accountRoutes: RouteDescription[] = [
  { method: 'get', path: '/api/health', tag: 'Service', summary: 'Whether the service and its database are up', access: 'public', responses: { 200: json(healthResponse, 'Up'), 503: json(healthResponse, 'The database is down') } },
  { method: 'get', path: '/api/openapi.json', tag: 'Service', summary: 'This description of the API (OpenAPI 3.1)', access: 'public', responses: { 200: { description: 'The OpenAPI document', content: { 'application/json': openApiDocumentResponse } } } },
  { method: 'get', path: '/api/schemas/codebook.schema.json', tag: 'Service', summary: 'The JSON Schema (draft 2020-12) of the codebook export document, with its $id', access: 'public', responses: { 200: { description: 'The codebook format’s JSON Schema', content: { 'application/schema+json': 'object' } } } },
  { method: 'post', path: '/api/auth/signup', tag: 'Accounts', summary: 'Ask for a sign-up link by e-mail', access: 'public', input: { body: signupRequestBody }, responses: { 202: json(acceptedResponse, 'Accepted, whether or not the address has an account') }, errors: tooManyAttempts },
  { method: 'get', path: '/api/auth/signup/:token', tag: 'Accounts', summary: 'Check a sign-up link', access: 'public', readsJsonBody: true, input: { params: signupLinkParams }, responses: { 200: json(signupLinkPreview, 'The address the link is for') }, errors: { 410: 'The link has expired or been used' } },
  { method: 'post', path: '/api/auth/signup/complete', tag: 'Accounts', summary: 'Finish signing up: name, password and a first team', access: 'public', input: { body: signupCompleteBody }, responses: { 201: json(signupResponse, 'Signed up and signed in (the session cookie is set)') }, errors: { 409: 'The address already has an account', 410: 'The link has expired or been used', ...tooManyAttempts } },
  { method: 'post', path: '/api/auth/login', tag: 'Accounts', summary: 'Sign in', access: 'public', input: { body: loginBody }, responses: { 200: json(loginResponse, 'Signed in (the session cookie is set)') }, errors: { 401: 'Wrong e-mail or password', ...tooManyAttempts } },
  { method: 'post', path: '/api/auth/logout', tag: 'Accounts', summary: 'Sign out: ends the session the cookie or Bearer token names', access: 'optional-session', readsJsonBody: true, responses: { 204: noContent } },
  { method: 'post', path: '/api/auth/password-reset', tag: 'Accounts', summary: 'Ask for a password reset link by e-mail', access: 'public', input: { body: passwordResetRequestBody }, responses: { 202: json(acceptedResponse, 'Accepted, whether or not the address has an account') }, errors: tooManyAttempts },
  { method: 'post', path: '/api/auth/password-reset/confirm', tag: 'Accounts', summary: 'Set a new password with a reset link; ends every session', access: 'public', input: { body: passwordResetConfirmBody }, responses: { 204: noContent }, errors: { 410: 'The link has expired or been used', ...tooManyAttempts } },
  { method: 'get', path: '/api/me', tag: 'Accounts', summary: 'The signed-in user and their teams', access: 'session', responses: { 200: json(meResponse, 'The caller') } },
  { method: 'post', path: '/api/me/password', tag: 'Accounts', summary: 'Change the password; ends every other session', access: 'session', input: { body: changePasswordBody }, responses: { 204: noContent }, errors: tooManyAttempts },
  { method: 'get', path: '/api/invitations/:token', tag: 'Invitations', summary: 'Check an invitation link', access: 'public', input: { params: invitationTokenParams }, responses: { 200: json(invitationPreview, 'The team, role and address of the invitation') }, errors: { 410: 'The invitation has expired, been used or been revoked' } },
  { method: 'post', path: '/api/invitations/:token/accept', tag: 'Invitations', summary: 'Accept an invitation: a new account, or the signed-in one if the address has an account', access: 'optional-session', input: { params: invitationTokenParams, body: acceptInvitationBody }, responses: { 200: json(acceptInvitationResponse, 'Joined the team') }, errors: { 401: 'The address has an account: sign in as it to accept', 409: 'The account changed while accepting; try again', 410: 'The invitation has expired, been used or been revoked' } },
];

const teamRoutes: RouteDescription[] = [
  { method: 'get', path: '/api/teams/:teamId/members', tag: 'Team', summary: 'List the team’s members', access: 'member', responses: { 200: json(membersResponse, 'The members') } },
  { method: 'patch', path: '/api/teams/:teamId/members/:userId', tag: 'Team', summary: 'Change a member’s role', access: 'admin', input: { params: memberParams, body: updateMemberBody }, responses: { 200: json(memberResponse, 'The member') }, errors: { 409: 'The team would be left without an admin' } },
  { method: 'delete', path: '/api/teams/:teamId/members/:userId', tag: 'Team', summary: 'Remove a member', access: 'admin', input: { params: memberParams }, responses: { 204: noContent }, errors: { 409: 'The team would be left without an admin' } },
  { method: 'get', path: '/api/teams/:teamId/invitations', tag: 'Team', summary: 'List the team’s invitations', access: 'admin', responses: { 200: json(invitationsResponse, 'The invitations') } },
  { method: 'post', path: '/api/teams/:teamId/invitations', tag: 'Team', summary: 'Invite someone by e-mail', access: 'admin', input: { body: createInvitationBody }, responses: { 201: json(invitationResponse, 'The invitation (its link is mailed)') }, errors: { 409: 'The person is already a member of the team' } },
  { method: 'delete', path: '/api/teams/:teamId/invitations/:invitationId', tag: 'Team', summary: 'Revoke an invitation', access: 'admin', input: { params: invitationParams }, responses: { 204: noContent }, errors: { 409: 'The invitation has already been accepted' } },
  { method: 'get', path: '/api/teams/:teamId/outbox', tag: 'Team', summary: 'The mail the studio sent for the team', access: 'admin', responses: { 200: json(outboxResponse, 'The messages') } },
  { method: 'get', path: '/api/teams/:teamId/workers', tag: 'Team', summary: 'The studio’s compute workers and queues', access: 'admin', responses: { 200: json(workersResponse, 'Workers and queues') } },
];

const imageRoutes: RouteDescription[] = [
  { method: 'get', path: '/api/teams/:teamId/image-sets', tag: 'Images', summary: 'List image sets', access: 'member', responses: { 200: json(imageSetsResponse, 'The sets') } },
  { method: 'post', path: '/api/teams/:teamId/image-sets', tag: 'Images', summary: 'Create an image set', access: 'engineer', input: { params: teamParams, body: createImageSetBody }, responses: { 201: json(imageSetResponse, 'The new set') }, errors: { 409: 'A set of that name exists' } },
  { method: 'get', path: '/api/teams/:teamId/image-sets/:setId', tag: 'Images', summary: 'Read an image set', access: 'member', input: { params: imageSetParams }, responses: { 200: json(imageSetResponse, 'The set') } },
  { method: 'patch', path: '/api/teams/:teamId/image-sets/:setId', tag: 'Images', summary: 'Rename, describe or reassign image roles in a set', access: 'engineer', input: { params: imageSetParams, body: updateImageSetBody }, responses: { 200: json(imageSetResponse, 'The set') }, errors: { 409: 'A set of that name exists' } },
  { method: 'delete', path: '/api/teams/:teamId/image-sets/:setId', tag: 'Images', summary: 'Delete an image set', access: 'admin', input: { params: imageSetParams }, responses: { 204: noContent }, errors: { 409: 'A run uses images of the set, or a release’s evaluation measured them' } },
  {
    method: 'post', path: '/api/teams/:teamId/image-sets/:setId/images', tag: 'Images', summary: 'Upload images (files, or zip archives of them)', access: 'engineer', input: { params: imageSetParams },
    rawBody: { mediaType: 'multipart/form-data', content: 'binary', description: 'One or more parts named "files": PNG, JPEG, WebP, TIFF, AVIF, GIF or a zip of them' },
    responses: { 201: json(uploadResponse, 'The images accepted and the files refused, with why') },
    errors: { 413: 'A file or the upload is too large', 415: 'Not multipart/form-data', 429: 'Too many uploads in progress' },
  },
  { method: 'get', path: '/api/teams/:teamId/image-sets/:setId/images', tag: 'Images', summary: 'List a set’s images, optionally by role', access: 'member', input: { params: imageSetParams, query: listImagesQuery }, responses: { 200: json(imagesResponse, 'The images') } },
  { method: 'post', path: '/api/teams/:teamId/image-sets/:setId/split', tag: 'Images', summary: 'Split a set’s images into training and held-out at random', access: 'engineer', input: { params: imageSetParams, body: splitImageSetBody }, responses: { 200: json(splitResponse, 'The set and its images with their new roles') } },
  { method: 'get', path: '/api/teams/:teamId/images/:imageId', tag: 'Images', summary: 'Read an image’s record', access: 'member', input: { params: imageParams }, responses: { 200: json(imageResponse, 'The image') } },
  { method: 'patch', path: '/api/teams/:teamId/images/:imageId', tag: 'Images', summary: 'Set an image’s role (training or held-out)', access: 'engineer', input: { params: imageParams, body: updateImageBody }, responses: { 200: json(imageResponse, 'The image') } },
  { method: 'delete', path: '/api/teams/:teamId/images/:imageId', tag: 'Images', summary: 'Delete an image', access: 'admin', input: { params: imageParams }, responses: { 204: noContent }, errors: { 409: 'A run still uses the image, or a release’s evaluation measured it' } },
  { method: 'get', path: '/api/teams/:teamId/images/:imageId/thumbnail', tag: 'Images', summary: 'An image’s thumbnail (ETag, private caching)', access: 'member', input: { params: imageParams }, responses: { 200: { description: 'The thumbnail', content: { 'image/webp': 'binary' } }, 304: { description: 'Not modified (If-None-Match)' } } },
  { method: 'get', path: '/api/teams/:teamId/images/:imageId/original', tag: 'Images', summary: 'An image’s original file as uploaded', access: 'member', input: { params: imageParams }, responses: { 200: { description: 'The original, in its own format', content: { 'image/*': 'binary' } } } },
];

const runRoutes: RouteDescription[] = [
  { method: 'get', path: '/api/teams/:teamId/runs', tag: 'Runs', summary: 'List runs', access: 'member', input: { params: teamParams }, responses: { 200: json(runsResponse, 'The runs') } },
  { method: 'get', path: '/api/teams/:teamId/runs/:runId', tag: 'Runs', summary: 'Read a run, with its codebooks and jobs', access: 'member', input: { params: runParams }, responses: { 200: json(runResponse, 'The run') } },
  {
    method: 'get', path: '/api/teams/:teamId/runs/:runId/events', tag: 'Runs', summary: 'A run’s progress as server-sent events (snapshot, progress, state, end)', access: 'member', input: { params: runParams },
    responses: { 200: { description: 'An event stream (text/event-stream; each data line is JSON)', content: { 'text/event-stream': 'text' } } },
    errors: { 429: 'Too many open streams for this user' },
  },
  { method: 'post', path: '/api/teams/:teamId/runs', tag: 'Runs', summary: 'Start a training run', access: 'engineer', input: { params: teamParams, body: createRunBody }, responses: { 201: json(runResponse, 'The run, queued') } },
  { method: 'post', path: '/api/teams/:teamId/runs/:runId/cancel', tag: 'Runs', summary: 'Cancel a queued or running run', access: 'engineer', input: { params: runParams }, responses: { 200: json(runResponse, 'The run') }, errors: { 409: 'The run has already finished' } },
  { method: 'patch', path: '/api/teams/:teamId/runs/:runId', tag: 'Runs', summary: 'Rename a run', access: 'engineer', input: { params: runParams, body: renameRunBody }, responses: { 200: json(runResponse, 'The run') }, errors: { 409: `${frozen}: its run keeps its name` } },
  { method: 'delete', path: '/api/teams/:teamId/runs/:runId', tag: 'Runs', summary: 'Delete a run and its codebooks', access: 'admin', input: { params: runParams }, responses: { 204: noContent }, errors: { 409: `The run is still running, or ${frozen.toLowerCase()}` } },
  { method: 'get', path: '/api/teams/:teamId/runs/:runId/curve', tag: 'Results', summary: 'A run’s rate–distortion curve with the baseline codecs', access: 'member', input: { params: runResultParams, query: exportFormatQuery }, responses: { 200: csvOrJson(runCurveResponse, 'The curve') } },
  { method: 'get', path: '/api/teams/:teamId/runs/:runId/metrics', tag: 'Results', summary: 'A run’s per-image metrics', access: 'member', input: { params: runResultParams, query: exportFormatQuery }, responses: { 200: csvOrJson(runMetricsResponse, 'The metrics') } },
  { method: 'get', path: '/api/teams/:teamId/compare/bd-table', tag: 'Results', summary: 'The Bjøntegaard table of a comparison (each structure’s curve of each run against the others and against JPEG, WebP and AVIF) as a download', access: 'member', input: { params: teamParams, query: bdTableQuery }, responses: { 200: csvOrJson(bdTableResponse, 'The BD table') } },
  { method: 'get', path: '/api/teams/:teamId/compare', tag: 'Results', summary: 'Compare the curves of 2–6 runs, one series per structure, with BD-rate and BD-PSNR between them and against JPEG, WebP and AVIF', access: 'member', input: { params: teamParams, query: compareQuery }, responses: { 200: json(compareResponse, 'The comparison') } },
];

const codebookRoutes: RouteDescription[] = [
  { method: 'get', path: '/api/teams/:teamId/codebooks', tag: 'Codebooks', summary: 'List codebooks', access: 'member', input: { params: teamParams }, responses: { 200: json(codebooksResponse, 'The codebooks') } },
  { method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId', tag: 'Codebooks', summary: 'Read a codebook with its codewords and its decoder cost (table bytes, operations per pixel, longest code)', access: 'member', input: { params: codebookParams }, responses: { 200: json(codebookResponse, 'The codebook') } },
  {
    method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/export', tag: 'Codebooks', summary: 'Download a codebook as its export document, or its codewords as NumPy .npy with target=npy (an attachment)', access: 'member', input: { params: codebookParams, query: exportCodebookQuery },
    responses: { 200: { description: 'The codebook document, or the codewords as .npy', content: { 'application/json': codebookDocument, 'application/octet-stream': 'binary' } } },
  },
  {
    method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/index-map/:imageId', tag: 'Codebooks', summary: 'An image coded with a codebook: its index map (or block mean codes, plane=means) as NumPy .npy', access: 'member', input: { params: reconstructionParams, query: indexMapQuery },
    responses: { 200: { description: 'The .npy file (an attachment)', content: { 'application/octet-stream': 'binary' } } },
    errors: { 429: 'Too many reconstructions being computed; Retry-After says when' },
  },
  {
    method: 'post', path: '/api/teams/:teamId/codebooks/import', tag: 'Codebooks', summary: 'Import a codebook export document', access: 'engineer', input: { params: teamParams, query: importCodebookQuery },
    rawBody: { mediaType: 'application/json', content: codebookDocument, description: 'A codebook document (up to 64 MiB), checked against the format and its checksum' },
    responses: { 201: json(codebookResponse, 'The imported codebook') },
    errors: { 413: 'The document is too large' },
  },
  { method: 'post', path: '/api/teams/:teamId/codebooks/:codebookId/evaluate', tag: 'Codebooks', summary: 'Evaluate a codebook on held-out images (a job)', access: 'engineer', input: { params: evaluateCodebookParams, body: evaluateCodebookBody }, responses: { 202: json(evaluateCodebookResponse, 'The evaluation job, queued') }, errors: { 409: frozen } },
  { method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/evaluations', tag: 'Codebooks', summary: 'A codebook’s evaluations with per-image rows', access: 'member', input: { params: evaluateCodebookParams }, responses: { 200: json(codebookEvaluationsResponse, 'The evaluations') } },
  {
    method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/reconstruction/:imageId', tag: 'Codebooks', summary: 'An image coded with a codebook: original, reconstruction or error as PNG, or the figures (view=info)', access: 'member', input: { params: reconstructionParams, query: reconstructionQuery },
    responses: { 200: { description: 'A PNG (X-Encoded-Bytes gives the coded size), or the figures as JSON with view=info', content: { 'image/png': 'binary', 'application/json': reconstructionInfo } } },
    errors: { 429: 'Too many reconstructions being computed; Retry-After says when' },
  },
  {
    method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/structure', tag: 'Codebooks', summary: 'How the codebook\u2019s table reads by tree level (nodes, cell populations, leaves) or residual stage (rows, signed-tile scale)', access: 'member', input: { params: codebookParams },
    responses: { 200: json(codebookStructureResponse, 'The levels or stages; a flat codebook answers its kind alone') },
  },
  {
    method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/reconstruction/:imageId/steps', tag: 'Codebooks', summary: 'An image through a tree\u2019s levels or a residual codebook\u2019s stages: index bits, MSE and PSNR at each step, or with step=N that step\u2019s reconstruction as PNG', access: 'member', input: { params: reconstructionParams, query: structureStepsQuery },
    responses: { 200: { description: 'Every step\u2019s figures as JSON (the last the full reconstruction), or with step=N the PNG of a tree descended only to level N / the first N residual stages summed', content: { 'application/json': structureStepsResponse, 'image/png': 'binary' } } },
    errors: { 429: 'Too many reconstructions being computed; Retry-After says when' },
  },
  {
    method: 'post', path: '/api/teams/:teamId/codebooks/:codebookId/anomaly-jobs', tag: 'Codebooks', summary: 'Score an image\u2019s blocks, or rank a set\u2019s most unusual blocks, under the codebook read as a density (a job)', access: 'member', input: { params: codebookParams, body: anomalyJobBody },
    responses: { 202: json(modelJobResponse, 'The anomaly job, queued') },
  },
  {
    method: 'post', path: '/api/teams/:teamId/codebooks/:codebookId/denoise-jobs', tag: 'Codebooks', summary: 'Add seeded noise to an image and remove it with the nearest-codeword and posterior-mean estimators (a job)', access: 'member', input: { params: codebookParams, body: denoiseJobBody },
    responses: { 202: json(modelJobResponse, 'The denoise job, queued') },
  },
  {
    method: 'post', path: '/api/teams/:teamId/codebooks/:codebookId/anomaly-jobs/find', tag: 'Codebooks', summary: 'The anomaly job the same request queued before (not failed or cancelled), or null; queues nothing', access: 'member', input: { params: codebookParams, body: anomalyJobBody },
    responses: { 200: json(modelJobLookupResponse, 'The job, or null') },
  },
  {
    method: 'post', path: '/api/teams/:teamId/codebooks/:codebookId/denoise-jobs/find', tag: 'Codebooks', summary: 'The denoise job the same request queued before (not failed or cancelled), or null; queues nothing', access: 'member', input: { params: codebookParams, body: denoiseJobBody },
    responses: { 200: json(modelJobLookupResponse, 'The job, or null') },
  },
  { method: 'get', path: '/api/teams/:teamId/model-jobs/:jobId', tag: 'Codebooks', summary: 'An anomaly or denoise job: state, progress and, once it has succeeded, its result', access: 'member', input: { params: modelJobParams }, responses: { 200: json(modelJobResponse, 'The job') } },
  { method: 'post', path: '/api/teams/:teamId/model-jobs/:jobId/cancel', tag: 'Codebooks', summary: 'Cancel an anomaly or denoise job', access: 'engineer', input: { params: modelJobParams }, responses: { 200: json(modelJobResponse, 'The job, cancelled or asked to stop') }, errors: { 409: 'The job has already ended' } },
  { method: 'get', path: '/api/teams/:teamId/model-jobs/:jobId/views/:view', tag: 'Codebooks', summary: 'One image of a finished denoise job: clean, noisy, hard or mean', access: 'member', input: { params: modelJobViewParams }, responses: { 200: { description: 'The PNG', content: { 'image/png': 'binary' } } } },
  {
    method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/channel', tag: 'Codebooks', summary: 'PSNR against bit-error rate on a binary symmetric channel over the raw payload, measured over seeds and expected from the closed form, on held-out images', access: 'member', input: { params: codebookParams, query: channelQuery },
    responses: { 200: json(channelResponse, 'The curve') },
    errors: { 429: 'Too many computations in progress; Retry-After says when' },
  },
  {
    method: 'post', path: '/api/teams/:teamId/codebooks/:codebookId/reorder', tag: 'Codebooks', summary: 'Index assignment for a noisy channel (binary switching): the reordered codebook saved as a new one', access: 'engineer', input: { params: codebookParams, body: reorderBody },
    responses: { 201: json(reorderResponse, 'The new codebook and the expected channel distortion before and after') },
    errors: { 429: 'Too many computations in progress; Retry-After says when' },
  },
  {
    method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/firmware/rounding', tag: 'Codebooks', summary: 'The PSNR cost of the firmware table\u2019s fixed point on held-out images, before export', access: 'member', input: { params: codebookParams, query: roundingQuery },
    responses: { 200: json(roundingResponse, 'The float and fixed-point PSNR and their difference') },
    errors: { 429: 'Too many computations in progress; Retry-After says when' },
  },
  {
    method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/firmware', tag: 'Codebooks', summary: 'The firmware bundle (fixed-point header, C99 reference decoder, example program, README) as a zip attachment', access: 'member', input: { params: codebookParams, query: firmwareQuery },
    responses: { 200: { description: 'The zip file (stored entries)', content: { 'application/zip': 'binary' } } },
  },
];

const releaseRoutes: RouteDescription[] = [
  { method: 'get', path: '/api/teams/:teamId/codebooks/:codebookId/proposal', tag: 'Releases', summary: 'A codebook’s review and release, or null before it is proposed', access: 'member', input: { params: proposalParams }, responses: { 200: json(codebookProposalResponse, 'The review, with its thread') } },
  {
    method: 'post', path: '/api/teams/:teamId/codebooks/:codebookId/proposal', tag: 'Releases', summary: 'Propose a codebook for release (or propose it again after a return) with a name, version and note', access: 'engineer', input: { params: proposalParams, body: proposeReleaseBody },
    responses: { 201: json(releaseResponse, 'The proposal, awaiting review') },
    errors: { 409: 'Already proposed or released, not evaluated yet, or the team already has a release of that name and version' },
  },
  { method: 'get', path: '/api/teams/:teamId/releases', tag: 'Releases', summary: 'The team’s releases and proposals, newest first', access: 'member', input: { params: teamParams }, responses: { 200: json(releasesResponse, 'The releases') } },
  { method: 'get', path: '/api/teams/:teamId/releases/:releaseId', tag: 'Releases', summary: 'A release or proposal with its review thread', access: 'member', input: { params: releaseParams }, responses: { 200: json(releaseResponse, 'The release') } },
  {
    method: 'get', path: '/api/teams/:teamId/releases/:releaseId/report', tag: 'Releases', summary: 'The release report: configuration, hashes, RD curve with BD-rate, per-image table, worst tiles, decoder cost, checksums, sign-off', access: 'member', input: { params: releaseParams },
    responses: { 200: json(releaseReportResponse, 'The report’s figures') },
    errors: { 409: 'The codebook has not been released', 429: 'Too many reports being measured; Retry-After says when' },
  },
  {
    method: 'post', path: '/api/teams/:teamId/releases/:releaseId/approve', tag: 'Releases', summary: 'Approve a proposal: the codebook becomes a frozen release (never by its proposer)', access: 'engineer', input: { params: releaseParams, body: approveReleaseBody },
    responses: { 200: json(releaseResponse, 'The release') },
    errors: { 403: 'The caller proposed it: another engineer or an admin reviews it', 409: 'Not awaiting review, or a job for the codebook has not finished' },
  },
  {
    method: 'post', path: '/api/teams/:teamId/releases/:releaseId/return', tag: 'Releases', summary: 'Send a proposal back with a comment (never by its proposer)', access: 'engineer', input: { params: releaseParams, body: returnReleaseBody },
    responses: { 200: json(releaseResponse, 'The returned proposal') },
    errors: { 403: 'The caller proposed it: another engineer or an admin reviews it', 409: 'Not awaiting review' },
  },
  { method: 'get', path: '/api/teams/:teamId/activity', tag: 'Team', summary: 'The team’s activity log, newest first, filtered by person, action and object', access: 'member', input: { params: teamParams, query: activityQuery }, responses: { 200: json(activityResponse, 'One page of entries') } },
];

const evaluationBatchRoutes: RouteDescription[] = [
  { method: 'get', path: '/api/teams/:teamId/evaluation-batches', tag: 'Results', summary: 'List evaluation batches (and single codebooks\u2019 evaluations), newest first', access: 'member', input: { params: evaluationBatchListParams }, responses: { 200: json(evaluationBatchesResponse, 'The batches') } },
  { method: 'post', path: '/api/teams/:teamId/evaluation-batches', tag: 'Results', summary: 'Evaluate several codebooks on several image sets as one job', access: 'engineer', input: { params: teamParams, body: createEvaluationBatchBody }, responses: { 202: json(evaluationBatchResponse, 'The batch, queued') } },
  { method: 'get', path: '/api/teams/:teamId/evaluation-batches/:jobId', tag: 'Results', summary: 'An evaluation batch: its job\u2019s state, progress and error, and the cells measured so far', access: 'member', input: { params: evaluationBatchParams }, responses: { 200: json(evaluationBatchResponse, 'The batch') } },
  { method: 'post', path: '/api/teams/:teamId/evaluation-batches/:jobId/cancel', tag: 'Results', summary: 'Cancel a queued or running evaluation batch', access: 'engineer', input: { params: evaluationBatchParams }, responses: { 200: json(evaluationBatchResponse, 'The batch') }, errors: { 409: 'The evaluation has already finished' } },
  { method: 'get', path: '/api/teams/:teamId/evaluation-batches/:jobId/matrix', tag: 'Results', summary: 'A batch\u2019s codebooks \u00d7 sets matrix (PSNR, SSIM, rates)', access: 'member', input: { params: evaluationBatchParams, query: exportFormatQuery }, responses: { 200: csvOrJson(evaluationBatchResponse, 'The matrix') } },
];

const workerRoutes: RouteDescription[] = [
  { method: 'post', path: '/internal/v1/workers', tag: 'Compute workers (internal)', summary: 'A compute worker joins with the worker token', access: 'worker', input: { body: registerWorkerBody }, responses: { 201: json(registerWorkerResponse, 'The worker’s session and queue settings') } },
  { method: 'get', path: '/internal/v1/originals/:sha256', tag: 'Compute workers (internal)', summary: 'An original image a task granted to this worker', access: 'worker', input: { params: originalParams }, validatedInside: true, responses: { 200: { description: 'The bytes', content: { 'application/octet-stream': 'binary' } } } },
];

/** Every route the app mounts, in the order of its tags on the reference page. */
export const routeTable: readonly RouteDescription[] = [...accountRoutes, ...teamRoutes, ...imageRoutes, ...runRoutes, ...codebookRoutes, ...releaseRoutes, ...evaluationBatchRoutes, ...workerRoutes];
