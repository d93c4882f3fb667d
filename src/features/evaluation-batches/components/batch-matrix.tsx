import { useState } from 'react';
import { EXACT, type EvaluationBatch } from '../../../../server/contracts';
import { SortableHeader, type SortDirection } from '../../../components/ui/sortable-header';
import { SelectField } from '../../../components/ui/field';

type Figure = 'psnr' | 'ssim' | 'bppActual' | 'bppFixed';
type Result = NonNullable<EvaluationBatch['cells'][number]['result']>;

const FIGURES: Record<Figure, { label: string; show: (r: Result) => string; value: (r: Result) => number | null }> = {
  // An exact reconstruction's PSNR (null) sorts above every finite one.
  psnr: { label: 'PSNR (dB)', show: (r) => (r.psnr === null ? EXACT.text : r.psnr.toFixed(2)), value: (r) => r.psnr ?? Infinity },
  ssim: { label: 'SSIM', show: (r) => (r.ssim === null ? 'n/a' : r.ssim.toFixed(4)), value: (r) => r.ssim },
  bppActual: { label: 'Rate, coded files (bpp)', show: (r) => r.bppActual.toFixed(4), value: (r) => r.bppActual },
  bppFixed: { label: 'Rate, fixed (bpp)', show: (r) => r.bppFixed.toFixed(4), value: (r) => r.bppFixed },
};

type SortKey = { column: 'codebook' | number; direction: Exclude<SortDirection, false> };

/** Codebooks down, image sets across, one figure per cell; any column sorts the rows. */
export function BatchMatrix({ batch }: { batch: EvaluationBatch }) {
  const [figure, setFigure] = useState<Figure>('psnr');
  const [sort, setSort] = useState<SortKey>({ column: 'codebook', direction: 'asc' });
  const cell = new Map(batch.cells.map((c) => [`${c.codebookId}:${c.setIndex}`, c.result]));
  const f = FIGURES[figure];
  const keyOf = (codebookId: number): string | number | null => {
    if (sort.column === 'codebook') return batch.codebooks.find((c) => c.id === codebookId)?.name ?? `#${codebookId}`;
    const r = cell.get(`${codebookId}:${sort.column}`);
    return r ? f.value(r) : null;
  };
  const rows = [...batch.codebooks].sort((a, b) => {
    const ka = keyOf(a.id);
    const kb = keyOf(b.id);
    // Unmeasured cells go last whichever the direction.
    if (ka === null || kb === null) return ka === null ? (kb === null ? 0 : 1) : -1;
    const order = typeof ka === 'string' ? ka.localeCompare(String(kb)) : ka - (kb as number);
    return sort.direction === 'asc' ? order : -order;
  });
  const toggle = (column: SortKey['column']) =>
    setSort((s) => ({ column, direction: s.column === column && s.direction === (column === 'codebook' ? 'asc' : 'desc') ? (column === 'codebook' ? 'desc' : 'asc') : column === 'codebook' ? 'asc' : 'desc' }));
  const sortedAs = (column: SortKey['column']): SortDirection => (sort.column === column ? sort.direction : false);

  return (
    <div className="flex flex-col gap-3">
      <SelectField label="Figure" containerClassName="max-w-xs" value={figure} onChange={(e) => setFigure(e.target.value as Figure)}>
        {(Object.keys(FIGURES) as Figure[]).map((k) => (
          <option key={k} value={k}>
            {FIGURES[k].label}
          </option>
        ))}
      </SelectField>
      <div className="overflow-x-auto">
        <table className="w-full text-sm" aria-label="Evaluation matrix">
          <thead className="text-left text-xs text-ink-600">
            <tr className="border-b border-ink-200">
              <SortableHeader sorted={sortedAs('codebook')} onToggle={() => toggle('codebook')} className="py-2 pr-4">
                Codebook
              </SortableHeader>
              {batch.sets.map((s, i) => (
                <SortableHeader key={i} sorted={sortedAs(i)} onToggle={() => toggle(i)} className="py-2 pr-4 text-right" buttonClassName="flex-row-reverse">
                  {s.name}
                </SortableHeader>
              ))}
            </tr>
          </thead>
          <tbody>
            {rows.map((c) => (
              <tr key={c.id} className="border-b border-ink-100">
                <th scope="row" className="py-1.5 pr-4 text-left font-medium text-ink-900">
                  {c.name ?? `Codebook ${c.id} (deleted)`}
                  {c.size !== null && <span className="num ml-2 text-xs text-ink-600">K = {c.size}</span>}
                </th>
                {batch.sets.map((_, i) => {
                  const r = cell.get(`${c.id}:${i}`);
                  return (
                    <td key={i} className="num py-1.5 pr-4 text-right text-ink-900">
                      {r ? f.show(r) : '—'}
                    </td>
                  );
                })}
              </tr>
            ))}
          </tbody>
        </table>
      </div>
    </div>
  );
}
