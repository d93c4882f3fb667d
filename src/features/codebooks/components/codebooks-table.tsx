import {
  createColumnHelper,
  createSortedRowModel,
  rowSortingFeature,
  sortFn_alphanumeric,
  tableFeatures,
  useTable,
  type SortingState,
} from '@tanstack/react-table';
import { useState } from 'react';
import { Link } from 'react-router-dom';
import { STRUCTURE_LABELS, type CodebookSummary } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { SortableHeader } from '../../../components/ui/sortable-header';
import { cx } from '../../../lib/cx';
import { formatDate } from '../../../lib/format';
import { fixedRate, formatBpp, formatMse } from '../format';

const features = tableFeatures({ rowSortingFeature, sortedRowModel: createSortedRowModel(), sortFns: { alphanumeric: sortFn_alphanumeric } });
const helper = createColumnHelper<typeof features, CodebookSummary>();

/** Sortable list of the team's codebooks; the name links to the codebook page (team id travels in the row meta). */
export function CodebooksTable({ teamId, codebooks }: { teamId: number; codebooks: CodebookSummary[] }) {
  const [sorting, setSorting] = useState<SortingState>([]);
  const [columns] = useState(() =>
    helper.columns([
      helper.accessor('name', {
        header: 'Codebook',
        sortFn: 'alphanumeric',
        cell: (c) => (
          <Link to={href.teamCodebook(teamId, c.row.original.id)} className="font-medium text-ink-950 hover:text-ember-700 hover:underline">
            {c.getValue()}
          </Link>
        ),
      }),
      helper.accessor('origin', { header: 'From', sortFn: 'alphanumeric' }),
      helper.accessor('size', { header: 'K', cell: (c) => c.getValue().toLocaleString('en-GB') }),
      helper.accessor((row) => `${STRUCTURE_LABELS[row.structure]}${row.lambda !== null ? ` · λ = ${row.lambda}` : ''}`, { id: 'structure', header: 'Structure', sortFn: 'alphanumeric' }),
      helper.accessor((row) => `${row.patch.width}×${row.patch.height} ${row.color}`, { id: 'patch', header: 'Patch', sortFn: 'alphanumeric' }),
      helper.accessor((row) => fixedRate(row.bits, row.meanBits, row.patch), { id: 'rate', header: 'Fixed rate', cell: (c) => formatBpp(c.getValue()) }),
      helper.accessor('distortion', { header: 'Training MSE', cell: (c) => formatMse(c.getValue()) }),
      helper.accessor('createdAt', { header: 'Created', cell: (c) => formatDate(c.getValue()) }),
    ]),
  );
  const table = useTable({ features, columns, data: codebooks, state: { sorting }, onSortingChange: setSorting });
  const numeric = new Set(['size', 'rate', 'distortion']);

  return (
    <table className="w-full border-collapse text-left text-sm">
      <caption className="sr-only">Codebooks of this team</caption>
      <thead>
        {table.getHeaderGroups().map((group) => (
          <tr key={group.id} className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
            {group.headers.map((header) => {
              const sorted = header.column.getIsSorted();
              return (
                <SortableHeader
                  key={header.id}
                  sorted={sorted}
                  onToggle={header.column.getToggleSortingHandler()}
                  className={cx('py-2 pr-3 font-medium', numeric.has(header.column.id) && 'text-right')}
                >
                  <table.FlexRender header={header} />
                </SortableHeader>
              );
            })}
          </tr>
        ))}
      </thead>
      <tbody>
        {table.getRowModel().rows.map((row) => (
          <tr key={row.id} className="border-b border-ink-100 last:border-b-0">
            {row.getAllCells().map((cell) => (
              <td key={cell.id} className={cx('py-2.5 pr-3', numeric.has(cell.column.id) ? 'num text-right' : cell.column.id === 'name' ? '' : 'text-ink-700')}>
                <table.FlexRender cell={cell} />
              </td>
            ))}
          </tr>
        ))}
      </tbody>
    </table>
  );
}
