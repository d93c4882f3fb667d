import type { ReactNode } from 'react';

/** One labelled figure; numbers use the tabular mono face so columns of stats line up. */
export function Stat({ label, value, note }: { label: ReactNode; value: ReactNode; note?: ReactNode }) {
  return (
    <div className="rounded-lg border border-ink-200 bg-surface px-5 py-4 shadow-card">
      <dt className="text-xs font-medium tracking-[0.08em] text-ink-600 uppercase">{label}</dt>
      <dd className="mt-1.5 text-xl font-semibold text-ink-950">{value}</dd>
      {note && <dd className="mt-0.5 text-sm text-ink-600">{note}</dd>}
    </div>
  );
}
