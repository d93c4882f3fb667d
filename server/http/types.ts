import type { Role, User } from '../contracts';
import type { ReceivedUpload } from './middleware/receive-files';

declare global {
  // eslint-disable-next-line @typescript-eslint/no-namespace
  namespace Express {
    // passport puts the signed-in user here.
    // eslint-disable-next-line @typescript-eslint/no-empty-object-type
    interface User extends UserShape {}
    interface Request {
      /** Set by requireTeamRole: the caller's membership of req.params.teamId. */
      membership?: { teamId: number; role: Role };
      /** Set by authenticate/identify: the id (JWT jti) of the live session the request's token names. */
      sessionId?: string;
      /** Set by validate: the parsed body, query and params. */
      valid?: { body?: unknown; query?: unknown; params?: unknown };
      /** Set by receiveFiles: the uploaded parts, on disk. */
      upload?: ReceivedUpload;
    }
  }
}

type UserShape = User;

export {};
