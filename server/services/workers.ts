import type { RegisterWorkerBody, RegisterWorkerResponse, WorkersResponse } from '../contracts';
import { forbidden, notFound, unauthenticated } from '../errors';
import type { WorkerRegistry } from '../jobs/compute/registry';

export interface WorkersDeps {
  registry: WorkerRegistry;
  /** The studio's key prefix in Redis and its job lease, handed to a worker that joins. */
  prefix: string;
  leaseMs: number;
  /** Whether an original is stored (and where): the content store. */
  originalPath(sha256: string): Promise<string | null>;
  queueDepth(): Promise<WorkersResponse['queue']>;
}

/** Compute workers joining the studio, reading what their task names, and the admins' view of them. */
export function createWorkersService(deps: WorkersDeps) {
  return {
    async register(presentedToken: string | null, body: RegisterWorkerBody): Promise<RegisterWorkerResponse> {
      const joined = presentedToken ? await deps.registry.register(presentedToken, body) : null;
      if (!joined) throw unauthenticated('A worker needs the studio\u2019s current worker token');
      return { ...joined, prefix: deps.prefix, leaseMs: deps.leaseMs };
    },

    /** The worker a session secret names; 401 for anything else (a user's session included). */
    async workerOf(session: string | null): Promise<string> {
      const workerId = session ? await deps.registry.authenticate(session) : null;
      if (!workerId) throw unauthenticated('A worker session is required (register with the worker token)');
      return workerId;
    },

    /** Where the original is, if the worker's current task names it; 403 otherwise, whatever the digest. */
    async original(workerId: string, sha256: string): Promise<string> {
      if (!(await deps.registry.mayRead(workerId, sha256))) throw forbidden('The worker\u2019s current task does not name this original');
      const path = await deps.originalPath(sha256);
      if (!path) throw notFound('Original');
      return path;
    },

    /** Live workers and queue depth; a task of another team shows as busy without naming its job. */
    async list(teamId: number): Promise<WorkersResponse> {
      const [workers, queue] = await Promise.all([deps.registry.list(), deps.queueDepth()]);
      return {
        workers: workers.map((w) => ({
          workerId: w.workerId,
          host: w.host,
          threads: w.threads,
          startedAt: w.startedAt,
          lastBeat: w.lastBeat,
          task: w.task ? { kind: w.task.kind, jobId: w.task.teamId === teamId ? w.task.jobId : null, since: w.task.since } : null,
        })),
        queue,
      };
    },
  };
}

export type WorkersService = ReturnType<typeof createWorkersService>;
