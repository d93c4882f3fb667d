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
  RunsService,
  TeamsService,
} from '../../services';
import type { RequireTeamRole } from '../middleware/require-team-role';

export interface RouteDeps {
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
  comparison: ComparisonService;
  authenticate: RequestHandler;
  requireTeamRole: RequireTeamRole;
  sessionTtlSeconds: number;
  loginLimiter: RequestHandler;
  resetLimiter: RequestHandler;
}
