import type { CliContext } from './context';

export interface Progress {
  update(fraction: number, detail?: string): void;
  done(): void;
}

const SILENT: Progress = { update() {}, done() {} };
/** Work shorter than this never draws a bar, so quick commands stay quiet even on a terminal. */
const SHOW_AFTER_MS = 500;
const WIDTH = 24;

/** A one-line progress bar on stderr, drawn only when stderr is a terminal (never into logs or pipes). */
export function progressBar(ctx: CliContext, label: string): Progress {
  if (!ctx.stderrIsTTY) return SILENT;
  const start = Date.now();
  let drawn = false;
  let last = 0;
  return {
    update(fraction, detail = '') {
      const now = Date.now();
      if (now - start < SHOW_AFTER_MS || now - last < 100) return;
      last = now;
      drawn = true;
      const f = Math.max(0, Math.min(1, fraction));
      const filled = Math.round(f * WIDTH);
      ctx.stderr.write(`\r${label} [${'#'.repeat(filled)}${'.'.repeat(WIDTH - filled)}] ${(f * 100).toFixed(0).padStart(3)}% ${detail}\x1b[K`);
    },
    done() {
      if (drawn) ctx.stderr.write('\r\x1b[K');
    },
  };
}
