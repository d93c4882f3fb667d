import { INIT_LABELS, RUN_STRUCTURE_LABELS, SETTING_LABELS, TREE_GROWTH_LABELS, type RunDetail } from '../../../../server/contracts';

/** What the run trains per b, in words: its structure and, for residual stages, their search. */
export function structureText(n: RunDetail['normalized']): string {
  const s = n.structure;
  if (!s) return n.lambdas ? `${RUN_STRUCTURE_LABELS.full}, and entropy-constrained at λ = ${n.lambdas.join(', ')}` : RUN_STRUCTURE_LABELS.full;
  if (s.kind === 'tree') return `${RUN_STRUCTURE_LABELS.tree}, ${TREE_GROWTH_LABELS[s.growth ?? 'balanced'].toLowerCase()}`;
  const search = s.mBest === null ? 'greedy search' : `M-best search, M = ${s.mBest}`;
  return `${RUN_STRUCTURE_LABELS.residual}: ${s.stages} stages sharing b, ${search}${s.refinementPasses > 0 ? `, ${s.refinementPasses} refinement passes` : ''}`;
}

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
    ['Structure', structureText(n)],
    [SETTING_LABELS.sizes, n.structure ? `${n.sizes.join(', ')} (leaves or index values per b; the tables are on each codebook)` : n.sizes.join(', ')],
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
