import type { ReactNode } from 'react';
import { cx } from '../../lib/cx';

type Tone = 'accent' | 'ink' | 'outline' | 'caution';

const tones: Record<Tone, string> = {
  accent: 'bg-ember-100 text-ember-800',
  ink: 'bg-ink-800 text-white',
  outline: 'border border-ink-300 text-ink-700',
  caution: 'bg-caution-50 text-caution-800 border border-caution-200',
};

export function Badge({ tone = 'outline', children, className }: { tone?: Tone; children: ReactNode; className?: string }) {
  return (
    <span className={cx('inline-flex h-5 items-center rounded-sm px-1.5 text-xs font-medium tracking-wide', tones[tone], className)}>
      {children}
    </span>
  );
}
