import type { HealthResponse } from '../contracts';
import type { Database } from '../db';

export function createHealthService(deps: { db: Database; version: string }) {
  return {
    async check(): Promise<HealthResponse> {
      const up = await deps.db.ping(2_000);
      return { status: up ? 'ok' : 'degraded', database: up ? 'up' : 'down', version: deps.version };
    },
  };
}

export type HealthService = ReturnType<typeof createHealthService>;
