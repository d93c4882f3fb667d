import { INIT_LABELS, SETTING_LABELS, type RunDetail } from '../../../../server/contracts';

/** The normalized configuration the jobs ran with: what a reader needs to reproduce the run. */
export function RunConfig({ run }: { run: RunDetail }) {
  const n = run.normalized;
  const channels = n.color === 'rgb' ? 3 : 1;
  const dimension = n.patch.width * n.patch.height * channels;
  const rows: Array<[string, string]> = [
    [SETTING_LABELS.patch, `${n.patch.width}×${n.patch.height} ${n.color}`],
    [SETTING_LABELS.stride, n.stride === undefined ? `${n.patch.width}×${n.patch.height} (non-overlapping)` : `${n.stride} px`],
    ['Vector dimension', String(dimension)],
    [SETTING_LABELS.bits, n.bits.from === n.bits.to ? String(n.bits.from) : `${n.bits.from} … ${n.bits.to}`],
    [SETTING_LABELS.sizes, n.sizes.join(', ')],
    [SETTING_LABELS.meanBits, n.meanBits === 0 ? 'none' : `${n.meanBits}-bit block mean`],
    [SETTING_LABELS.init, INIT_LABELS[n.init]],
    [SETTING_LABELS.epsilon, String(n.epsilon)],
    [SETTING_LABELS.maxIterations, String(n.maxIterations)],
    [SETTING_LABELS.maxVectors, n.maxVectors.toLocaleString('en-GB')],
    [SETTING_LABELS.seed, String(n.seed)],
    [SETTING_LABELS.trainingImageIds, String(n.trainingImageIds.length)],
    [SETTING_LABELS.heldOutImageIds, String(n.heldOutImageIds.length)],
  ];
  return (
    <dl className="grid grid-cols-[auto_1fr] gap-x-4 gap-y-1.5 text-sm">
      {rows.map(([label, value]) => (
        <div key={label} className="contents">
          <dt className="text-ink-600">{label}</dt>
          <dd className="num text-ink-900">{value}</dd>
        </div>
      ))}
    </dl>
  );
}
