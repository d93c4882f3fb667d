import type { Logger } from '../config';
import type { Database } from '../db';
import { contentStoreLock, type ContentStore } from '../storage/content-store';
import type { Spool } from '../storage/spool';

export interface SweepReport {
  /** True when a backup held the store and this pass did nothing. */
  skipped: boolean;
  /** Originals looked at. */
  examined: number;
  /** Stored objects no row names any more (originals no image names, reconstruction views no reconstruction names), deleted with their thumbnails. */
  removed: number;
  /** Temporaries of interrupted writes and uploads, and orphaned thumbnails, deleted. */
  leftovers: number;
  bytesFreed: number;
}

/**
 * Deleting an image (or a whole set) removes its row; the stored bytes stay, because another set or
 * team may hold the same content. The sweep frees what no row names any more: neither an image nor a kept
 * reconstruction (whose rows go with their codebook or image). Anything put within the grace period is left
 * alone: an upload, or a reconstruction, stores its bytes first and commits the row afterwards.
 */
export function createStoreSweeper(deps: { db: Database; store: ContentStore; spool?: Spool; graceMs: number; logger?: Logger; now?: () => number }) {
  const now = deps.now ?? Date.now;
  let running: Promise<SweepReport> | undefined;

  const repos = deps.db.repos;

  async function sweepOnce(): Promise<SweepReport> {
    const notAfterMs = now() - deps.graceMs;
    const report: SweepReport = { skipped: false, examined: 0, removed: 0, leftovers: 0, bytesFreed: 0 };
    for await (const batch of deps.store.objects()) {
      report.examined += batch.length;
      const old = batch.filter((e) => e.mtimeMs <= notAfterMs);
      if (old.length === 0) continue;
      const shas = old.map((e) => e.sha256);
      const [images, reconstructions] = await Promise.all([repos.images.referencedShas(shas), repos.reconstructions.referencedShas(shas)]);
      for (const entry of old) {
        if (images.has(entry.sha256) || reconstructions.has(entry.sha256)) continue;
        // The store asks again at the last moment: an upload may have committed a row since the batch query.
        const freed = await deps.store.discardUnused(entry.sha256, {
          notAfterMs,
          inUse: async () => (await repos.images.countBySha(entry.sha256)) + (await repos.reconstructions.countBySha(entry.sha256)) > 0,
        });
        if (freed !== null) {
          report.removed += 1;
          report.bytesFreed += freed;
        }
      }
    }
    const leftovers = await deps.store.removeLeftovers(notAfterMs);
    // Scratch folders of uploads cut short by a killed process (a live upload's folder is never this old).
    const scratch = (await deps.spool?.removeLeftovers(notAfterMs)) ?? { files: 0, bytes: 0 };
    report.leftovers = leftovers.files + scratch.files;
    report.bytesFreed += leftovers.bytes + scratch.bytes;
    return report;
  }

  /** One pass over the store; a call while a pass runs waits for that pass instead of starting another. */
  function sweep(): Promise<SweepReport> {
    running ??= deps.db
      .withNamedLock(contentStoreLock, 0, sweepOnce)
      .then((held) => held?.value ?? { skipped: true, examined: 0, removed: 0, leftovers: 0, bytesFreed: 0 })
      .finally(() => {
        running = undefined;
      });
    return running;
  }

  let timers: NodeJS.Timeout[] = [];
  const sweepAndLog = () => {
    sweep().then(
      (r) => {
        if (r.removed > 0 || r.leftovers > 0) deps.logger?.info(r, 'content store swept');
      },
      (err: unknown) => deps.logger?.error({ err }, 'content store sweep failed'),
    );
  };

  return {
    sweep,
    /** A first pass after firstDelayMs, then one every intervalMs; the timers never hold the process open. */
    schedule(intervalMs: number, firstDelayMs = intervalMs): void {
      const first = setTimeout(() => {
        sweepAndLog();
        const every = setInterval(sweepAndLog, intervalMs);
        every.unref();
        timers.push(every);
      }, firstDelayMs);
      first.unref();
      timers.push(first);
    },
    /** Stops the schedule and waits for a pass in progress, so the database can close under it. */
    async stop(): Promise<void> {
      for (const t of timers) clearTimeout(t);
      timers = [];
      await running?.catch(() => undefined);
    },
  };
}

export type StoreSweeper = ReturnType<typeof createStoreSweeper>;
