import type { RequestHandler } from 'express';
import type {
  AccountsService,
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
  RunsService,
  TeamsService,
} from '../../services';
import type { RequireTeamRole } from '../middleware/require-team-role';

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
  comparison: ComparisonService;
}

export interface RouteDeps extends Services {
  authenticate: RequestHandler;
  requireTeamRole: RequireTeamRole;
  sessionTtlSeconds: number;
  loginLimiter: RequestHandler;
  resetLimiter: RequestHandler;
}
