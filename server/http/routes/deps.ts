import type { RequestHandler } from 'express';
import type {
  AccountsService,
  ApiSchemasService,
  CodebookModelService,
  CodebookChannelService,
  CodebooksService,
  ComparisonService,
  EvaluationService,
  HealthService,
  ImageRecordsService,
  ImageSetsService,
  ImageUploadsService,
  InvitationsService,
  OutboxService,
  ReconstructionsService,
  ReleaseReportService,
  ReleasesService,
  ActivityService,
  RunsService,
  TeamsService,
  WorkersService,
} from '../../services';
import type { RequireTeamRole } from '../middleware/require-team-role';
import type { TeamEventStreams } from '../middleware/sse';

/** Every service the HTTP layer calls; built once in server/composition.ts. */
export interface Services {
  accounts: AccountsService;
  teams: TeamsService;
  invitations: InvitationsService;
  outbox: OutboxService;
  health: HealthService;
  imageSets: ImageSetsService;
  imageRecords: ImageRecordsService;
  imageUploads: ImageUploadsService;
  runs: RunsService;
  codebooks: CodebooksService;
  evaluation: EvaluationService;
  reconstructions: ReconstructionsService;
  codebookModel: CodebookModelService;
  codebookChannel: CodebookChannelService;
  comparison: ComparisonService;
  workers: WorkersService;
  apiSchemas: ApiSchemasService;
  releases: ReleasesService;
  releaseReport: ReleaseReportService;
  activity: ActivityService;
}

export interface RouteDeps extends Services {
  /** 401 without a live session; sets req.user and req.sessionId. */
  authenticate: RequestHandler;
  /** Sets req.user and req.sessionId when there is a live session, and lets the request through either way. */
  identify: RequestHandler;
  requireTeamRole: RequireTeamRole;
  sessionTtlSeconds: number;
  /** Per client address (see middleware/rate-limit.ts); each counts apart. */
  limiters: {
    login: RequestHandler;
    signup: RequestHandler;
    signupComplete: RequestHandler;
    resetRequest: RequestHandler;
    resetConfirm: RequestHandler;
  };
  /** Receives an upload's files to disk, within the upload limits and concurrency caps (middleware/receive-files). */
  receiveFiles: RequestHandler;
  /** Run event streams: the per-user cap and the membership re-check (middleware/sse). */
  eventStreams: TeamEventStreams;
}
