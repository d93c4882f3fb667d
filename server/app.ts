import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import cookieParser from 'cookie-parser';
import express, { type Express } from 'express';
import helmet from 'helmet';
import { pinoHttp } from 'pino-http';
import type { Config, Logger } from './config';
import { createAuthenticator } from './http/middleware/authenticate';
import { requireIdentityEncoding, requireKnownBodyType } from './http/middleware/content-type';
import { apiNotFound, errorHandler } from './http/middleware/error-handler';
import { refuseCrossSiteMutations } from './http/middleware/fetch-metadata';
import { maskTokensInUrl } from './http/middleware/log-redaction';
import { originCheck } from './http/middleware/origin-check';
import { createConcurrencyGate } from './http/middleware/concurrency-gate';
import { addressLimiter } from './http/middleware/rate-limit';
import { receiveFiles } from './http/middleware/receive-files';
import { requireTeamRoleFactory } from './http/middleware/require-team-role';
import { createTeamEventStreams } from './http/middleware/sse';
import { apiDescriptionRouter } from './http/routes/api-description';
import { authRouter } from './http/routes/auth';
import { codebooksRouter } from './http/routes/codebooks';
import { activityRouter, codebookProposalRouter, releasesRouter } from './http/routes/releases';
import { compareRouter } from './http/routes/compare';
import { codebookEvaluationsRouter, runResultsRouter } from './http/routes/curves';
import { evaluationBatchesRouter } from './http/routes/evaluation-batches';
import type { RouteDeps } from './http/routes/deps';
import { healthRouter } from './http/routes/health';
import { internalRouter, teamWorkersRouter } from './http/routes/internal';
import { imageSetsRouter } from './http/routes/image-sets';
import { imagesRouter } from './http/routes/images';
import { invitationsRouter } from './http/routes/invitations';
import { meRouter } from './http/routes/me';
import { membersRouter } from './http/routes/members';
import { outboxRouter } from './http/routes/outbox';
import { reconstructionsRouter } from './http/routes/reconstructions';
import { codebookModelRouter, modelJobsRouter } from './http/routes/codebook-model';
import { codebookChannelRouter } from './http/routes/codebook-channel';
import { runsRouter } from './http/routes/runs';
import { teamInvitationsRouter } from './http/routes/team-invitations';
import './http/types';
import type { SessionTokens } from './services';
import type { Services } from './http/routes/deps';

export interface AppDeps {
  config: Config;
  logger: Logger;
  sessions: SessionTokens;
  services: Services;

  /** Built client to serve; defaults to dist/ at the repository root. */
  clientDir?: string;
}

const defaultClientDir = fileURLToPath(new URL('../dist', import.meta.url));

export function createApp(deps: AppDeps): Express {
  const { config, logger, services } = deps;
  const app = express();
  app.disable('x-powered-by');
  app.set('query parser', 'simple');
  // Off unless TRUST_PROXY names the proxy: only then do req.ip (rate limits) and req.secure (the cookie's
  // Secure flag) follow X-Forwarded-For / X-Forwarded-Proto, which any client could otherwise write.
  app.set('trust proxy', config.trustProxy === false ? false : Array.isArray(config.trustProxy) ? [...config.trustProxy] : config.trustProxy);

  app.use(
    helmet({
      contentSecurityPolicy: {
        useDefaults: false,
        directives: {
          defaultSrc: ["'self'"],
          scriptSrc: ["'self'"],
          styleSrc: ["'self'"],
          fontSrc: ["'self'"],
          imgSrc: ["'self'", 'data:', 'blob:'],
          connectSrc: ["'self'"],
          workerSrc: ["'self'", 'blob:'],
          objectSrc: ["'none'"],
          baseUri: ["'self'"],
          formAction: ["'self'"],
          frameAncestors: ["'none'"],
        },
      },
    }),
  );
  app.use(
    pinoHttp({
      logger,
      // Health probes arrive every few seconds; logging them drowns everything else.
      autoLogging: { ignore: (req) => req.url === '/api/health' },
      // Compact lines: pino-http binds the serialized request to a child logger on every request, whatever the level,
      // so serializing every header cost each request a JSON.stringify. Tokens in URLs stay masked.
      serializers: {
        req: (req: { id?: unknown; method?: string; url?: string }) => ({ id: req.id, method: req.method, url: maskTokensInUrl(req.url) }),
        res: (res: { statusCode?: number }) => ({ statusCode: res.statusCode }),
      },
      customLogLevel: (_req, res, err) => (err || res.statusCode >= 500 ? 'error' : res.statusCode >= 400 ? 'warn' : 'info'),
    }),
  );
  app.use(cookieParser());
  app.use('/api', originCheck(config.allowedOrigins));
  app.use('/api', refuseCrossSiteMutations);
  // Only headers are judged here. Bodies are read per route, after authenticate and the role check
  // (validate() or jsonBody(), with the limits of http/middleware/body.ts), so an anonymous or unauthorised
  // caller is answered before a byte of a large body is read.
  app.use('/api', requireKnownBodyType, requireIdentityEncoding);

  const { passport, authenticate, identify } = createAuthenticator({
    verifyOptions: deps.sessions.verifyOptions,
    sessionUser: (claims) => services.accounts.sessionUser(claims),
  });
  app.use(passport.initialize());

  const account = { limit: config.accountRateLimit, windowMs: config.accountRateWindowMs };
  const uploadGate = createConcurrencyGate({ total: config.uploads.maxConcurrent, perUser: config.uploads.maxConcurrentPerUser });
  const eventStreams = createTeamEventStreams({
    maxPerUser: config.sseMaxStreamsPerUser,
    teams: services.teams,
    sessionIsLive: (userId, sessionId) => services.accounts.sessionIsLive(userId, sessionId),
  });
  // A removed member's (or demoted one's) open streams of the team end at once, not at the next heartbeat.
  services.teams.onMembershipChange(({ teamId, userId }) => void eventStreams.recheck(teamId, userId));
  // So do the streams of a session that has ended (signed out, or its password changed or reset).
  services.accounts.onSessionsEnded((userId) => void eventStreams.recheckUser(userId));
  const routeDeps: RouteDeps = {
    ...services,
    authenticate,
    identify,
    requireTeamRole: requireTeamRoleFactory(services.teams),
    sessionTtlSeconds: deps.sessions.ttlSeconds,
    limiters: {
      login: addressLimiter({
        limit: config.loginRateLimit,
        windowMs: config.loginRateWindowMs,
        failuresOnly: true,
        message: 'Too many failed sign-ins from your network; wait a few minutes and try again',
      }),
      signup: addressLimiter({ ...account, message: 'Too many sign-up requests from your network; try again later' }),
      signupComplete: addressLimiter({ ...account, message: 'Too many sign-up attempts from your network; try again later' }),
      resetRequest: addressLimiter({ ...account, message: 'Too many reset requests from your network; try again later' }),
      resetConfirm: addressLimiter({ ...account, message: 'Too many password reset attempts from your network; try again later' }),
    },
    receiveFiles: receiveFiles({ limits: config.uploads, gate: uploadGate, scratchFolder: () => services.imageUploads.scratchFolder() }),
    eventStreams,
  };

  app.use('/api/health', healthRouter(routeDeps));
  app.use('/api/auth', authRouter(routeDeps));
  app.use('/api/me', meRouter(routeDeps));
  app.use('/api/invitations', invitationsRouter(routeDeps));
  app.use('/api/teams/:teamId/members', membersRouter(routeDeps));
  app.use('/api/teams/:teamId/invitations', teamInvitationsRouter(routeDeps));
  app.use('/api/teams/:teamId/outbox', outboxRouter(routeDeps));
  app.use('/api/teams/:teamId/image-sets', imageSetsRouter(routeDeps));
  app.use('/api/teams/:teamId/images', imagesRouter(routeDeps));
  app.use('/api/teams/:teamId/runs', runsRouter(routeDeps));
  app.use('/api/teams/:teamId/codebooks', codebooksRouter(routeDeps));
  app.use('/api/teams/:teamId/runs', runResultsRouter(routeDeps));
  app.use('/api/teams/:teamId/codebooks', codebookEvaluationsRouter(routeDeps));
  app.use('/api/teams/:teamId/codebooks', reconstructionsRouter(routeDeps));
  app.use('/api/teams/:teamId/codebooks', codebookModelRouter(routeDeps));
  app.use('/api/teams/:teamId/model-jobs', modelJobsRouter(routeDeps));
  app.use('/api/teams/:teamId/codebooks', codebookProposalRouter(routeDeps));
  app.use('/api/teams/:teamId/releases', releasesRouter(routeDeps));
  app.use('/api/teams/:teamId/activity', activityRouter(routeDeps));
  app.use('/api/teams/:teamId/evaluation-batches', evaluationBatchesRouter(routeDeps));
  app.use('/api/teams/:teamId/codebooks', codebookChannelRouter(routeDeps));
  app.use('/api/teams/:teamId/compare', compareRouter(routeDeps));
  app.use('/api/teams/:teamId/workers', teamWorkersRouter(routeDeps));
  app.use('/api', apiDescriptionRouter(routeDeps));
  app.use('/api', apiNotFound);
  app.use('/internal/v1', internalRouter(routeDeps));
  app.use('/internal', apiNotFound);

  if (config.serveClient) {
    const clientDir = deps.clientDir ?? defaultClientDir;
    const indexHtml = path.join(clientDir, 'index.html');
    if (!existsSync(indexHtml)) logger.warn({ clientDir }, 'SERVE_CLIENT is on but the client is not built (npm run build)');
    // Hashed assets never change under one name; index.html must always be revalidated.
    app.use('/assets', express.static(path.join(clientDir, 'assets'), { immutable: true, maxAge: '1y', fallthrough: false }));
    app.use(express.static(clientDir, { index: false, maxAge: 0 }));
    app.get('/{*splat}', (_req, res, next) => {
      if (!existsSync(indexHtml)) return next();
      res.set('Cache-Control', 'no-cache').sendFile(indexHtml);
    });
  }

  app.use(errorHandler);
  return app;
}
