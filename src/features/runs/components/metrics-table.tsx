import {
  createColumnHelper,
  createSortedRowModel,
  rowSortingFeature,
  sortFn_alphanumeric,
  tableFeatures,
  useTable,
  type SortingState,
} from '@tanstack/react-table';
import { useMemo, useState } from 'react';
import type { ImageMetrics } from '../../../../server/contracts';
import { SortableHeader } from '../../../components/ui/sortable-header';
import { cx } from '../../../lib/cx';
import { formatBpp, formatBytes, formatDb, formatMse, formatSsim } from '../format';

const features = tableFeatures({
  rowSortingFeature,
  sortedRowModel: createSortedRowModel(),
  sortFns: { alphanumeric: sortFn_alphanumeric },
});
const helper = createColumnHelper<typeof features, ImageMetrics>();

// Nulls (PSNR of an exact reconstruction, SSIM of tiny images) sort last whichever way the column is ordered.
const columns = helper.columns([
  helper.accessor('fileName', { header: 'Image', sortFn: 'alphanumeric', cell: (c) => <span className="font-medium text-ink-900">{c.getValue()}</span> }),
  helper.accessor((row) => row.width * row.height, { id: 'pixels', header: 'Size', cell: (c) => `${c.row.original.width}×${c.row.original.height}` }),
  helper.accessor('bppFixed', { header: 'Fixed', cell: (c) => formatBpp(c.getValue()) }),
  helper.accessor('bppEntropy', { header: 'Entropy', cell: (c) => formatBpp(c.getValue()) }),
  helper.accessor('bppActual', { header: 'Actual', cell: (c) => formatBpp(c.getValue()) }),
  helper.accessor('bppRaw', { header: 'Raw', cell: (c) => formatBpp(c.getValue()) }),
  helper.accessor('containerBytes', { header: 'Encoded', cell: (c) => formatBytes(c.getValue()) }),
  helper.accessor('mse', { header: 'MSE', cell: (c) => formatMse(c.getValue()) }),
  helper.accessor('psnr', { header: 'PSNR', sortUndefined: 'last', cell: (c) => formatDb(c.getValue()) }),
  helper.accessor('ssim', { header: 'SSIM', sortUndefined: 'last', cell: (c) => formatSsim(c.getValue()) }),
]);

/** Per-image figures of one codebook on the held-out set; every column sorts (click or Enter on its header). */
export function MetricsTable({ images, caption }: { images: ImageMetrics[]; caption: string }) {
  const [sorting, setSorting] = useState<SortingState>([{ id: 'psnr', desc: false }]);
  // sortUndefined only applies to undefined, so nulls become undefined for the table's accessors.
  const data = useMemo(() => images.map((row) => ({ ...row, psnr: row.psnr ?? undefined, ssim: row.ssim ?? undefined }) as ImageMetrics), [images]);
  const table = useTable({ features, columns, data, state: { sorting }, onSortingChange: setSorting });

  return (
    <div className="overflow-x-auto">
      <table className="w-full border-collapse text-left text-sm">
        <caption className="sr-only">{caption}</caption>
        <thead>
          {table.getHeaderGroups().map((group) => (
            <tr key={group.id} className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
              {group.headers.map((header) => {
                const sorted = header.column.getIsSorted();
                const numeric = header.column.id !== 'fileName';
                return (
                  <SortableHeader
                    key={header.id}
                    sorted={sorted}
                    onToggle={header.column.getToggleSortingHandler()}
                    className={cx('py-2 pr-3 font-medium', numeric && 'text-right')}
                    buttonClassName={cx('rounded-sm', numeric && 'flex-row-reverse')}
                    arrowClassName="text-ink-800"
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
            <tr key={row.id} className="border-b border-ink-100 last:border-b-0 hover:bg-ink-50/70">
              {row.getAllCells().map((cell) => (
                <td key={cell.id} className={cx('py-2 pr-3', cell.column.id === 'fileName' ? '' : 'num text-right text-ink-800')}>
                  <table.FlexRender cell={cell} />
                </td>
              ))}
            </tr>
          ))}
        </tbody>
      </table>
    </div>
  );
}
