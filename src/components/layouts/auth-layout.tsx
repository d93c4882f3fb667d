import type { ReactNode } from 'react';
import { Wordmark } from '../brand/wordmark';
import { CautionNote } from '../ui/caution-note';

/** Public pages (sign-in, sign-up, invitations, password reset): a brand band and one focused form. */
export function AuthLayout({ title, description, children, aside }: { title: ReactNode; description?: ReactNode; children: ReactNode; aside?: ReactNode }) {
  return (
    <div className="grid min-h-dvh lg:grid-cols-[minmax(22rem,5fr)_7fr]">
      <aside aria-label="About Cellwright" className="relative hidden overflow-hidden bg-ink-900 text-ink-100 lg:flex lg:flex-col lg:justify-between lg:p-10">
        <Wordmark tone="light" />
        <Mosaic />
        <div className="relative max-w-sm">
          <p className="text-xl leading-snug font-medium text-white">Train a codebook. Prove it on images it has never seen.</p>
          <p className="mt-3 text-sm text-ink-300">
            Cellwright lets imaging teams pick a patch shape and a bit budget, train codewords with the generalised Lloyd
            algorithm, and measure rate and distortion before anything is frozen into firmware.
          </p>
        </div>
      </aside>
      <div className="flex flex-col">
        <main id="main" className="flex flex-1 items-center justify-center px-5 py-12 sm:px-10">
          <div className="w-full max-w-[26rem]">
            <div className="mb-8 lg:hidden">
              <Wordmark />
            </div>
            <h1 className="text-2xl font-semibold tracking-tight text-ink-950">{title}</h1>
            {description && <p className="mt-1.5 text-base text-ink-600">{description}</p>}
            <div className="mt-7">{children}</div>
            {aside && <div className="mt-6 border-t border-ink-200 pt-5 text-sm text-ink-600">{aside}</div>}
          </div>
        </main>
        <footer className="border-t border-ink-200 px-5 py-4 sm:px-10">
          <CautionNote variant="footer" className="mx-auto max-w-3xl" />
        </footer>
      </div>
    </div>
  );
}

/**
 * A decorative patch mosaic: a smooth field quantized to five ink levels, drawn once from a fixed
 * formula so it is identical on every load.
 */
function Mosaic() {
  const cols = 14;
  const rows = 10;
  const levels = ['var(--color-ink-950)', 'var(--color-ink-800)', 'var(--color-ink-700)', 'var(--color-ink-600)', 'var(--color-ink-500)'];
  const cells = [];
  for (let r = 0; r < rows; r += 1) {
    for (let c = 0; c < cols; c += 1) {
      const v = 0.5 + 0.28 * Math.sin(c * 0.55 + r * 0.2) + 0.22 * Math.cos(r * 0.7 - c * 0.25);
      const level = Math.max(0, Math.min(levels.length - 1, Math.floor(v * levels.length)));
      const lit = r === 6 && c === 9;
      cells.push(
        <rect
          key={`${r}-${c}`}
          x={c * 24 + 1}
          y={r * 24 + 1}
          width="22"
          height="22"
          rx="3"
          fill={lit ? 'var(--color-ember-500)' : levels[level]}
        />,
      );
    }
  }
  return (
    <svg aria-hidden="true" viewBox={`0 0 ${cols * 24} ${rows * 24}`} className="pointer-events-none my-10 w-full max-w-md opacity-90">
      {cells}
    </svg>
  );
}
