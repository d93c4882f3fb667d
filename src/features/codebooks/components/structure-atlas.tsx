import { useMemo, useState } from 'react';
import type { CodebookDetail, ResidualStageView, TreeLevelView } from '../../../../server/contracts';
import { SelectField } from '../../../components/ui/field';
import { Panel } from '../../../components/ui/panel';
import { ErrorState, LoadingState } from '../../../components/ui/states';
import { messageOf } from '../../../lib/api-client';
import { useCodebookStructure } from '../api/get-codebook-structure';
import { codewordMean } from '../cell-stats';
import { CodewordAtlas, type AtlasOrder } from './codeword-atlas';

const percent = (part: number, whole: number) => (whole > 0 ? `${((part / whole) * 100).toFixed(1)} %` : '—');

/** Residual stages by name: "Stage 2". */
export const stageName = (stage: number) => `Stage ${stage}`;

/**
 * A tree's codewords level by level, or a residual codebook's stage by stage: the atlas of the rows the server says
 * belong to the chosen level or stage. Nothing for a flat codebook (the page's own atlas shows it whole).
 */
export function StructureAtlas({ teamId, codebook }: { teamId: number; codebook: CodebookDetail }) {
  const structured = codebook.structure === 'tree' || codebook.structure === 'residual';
  const view = useCodebookStructure(teamId, codebook.id, structured);
  if (!structured) return null;
  const title = codebook.structure === 'tree' ? 'Tree levels' : 'Residual stages';
  const description =
    codebook.structure === 'tree'
      ? 'Each level’s node codewords with their cell populations: the training vectors whose descent passes through the node. Leaves are framed.'
      : 'Each stage’s codewords; a block is the sum of one codeword from every stage';
  return (
    <Panel title={title} titleId="codebook-structure" description={description}>
      {view.isPending && <LoadingState label="Loading the structure…" />}
      {view.isError && <ErrorState message={messageOf(view.error)} onRetry={() => void view.refetch()} />}
      {view.data?.kind === 'tree' && <TreeLevels codebook={codebook} levels={view.data.levels} balanced={view.data.balanced} leaves={view.data.leaves} />}
      {view.data?.kind === 'residual' && <ResidualStages codebook={codebook} stages={view.data.stages} />}
    </Panel>
  );
}

function geometryOf(codebook: CodebookDetail) {
  return { width: codebook.patch.width, height: codebook.patch.height, channels: codebook.channels };
}

function OrderField({ order, onChange }: { order: AtlasOrder; onChange: (order: AtlasOrder) => void }) {
  return (
    <SelectField label="Order" value={order} onChange={(event) => onChange(event.target.value as AtlasOrder)} containerClassName="w-40">
      <option value="index">As stored</option>
      <option value="usage">By usage</option>
      <option value="brightness">By brightness</option>
    </SelectField>
  );
}

function TreeLevels({ codebook, levels, balanced, leaves }: { codebook: CodebookDetail; levels: TreeLevelView[]; balanced: boolean; leaves: number }) {
  const [levelIndex, setLevel] = useState(Math.min(1, levels.length - 1));
  const [order, setOrder] = useState<AtlasOrder>('index');
  const [selected, setSelected] = useState<number | null>(null);
  const level = levels[levelIndex];
  const codewords = useMemo(() => level.nodes.map((n) => codebook.codewords[n.node]), [level, codebook]);
  const usage = useMemo(() => level.nodes.map((n) => n.usage), [level]);
  const marked = useMemo(() => level.nodes.map((n) => n.leaf), [level]);
  const node = selected === null ? null : level.nodes[selected];
  const root = levels[0].population;

  return (
    <div className="flex flex-col gap-4">
      <div className="flex flex-wrap items-end gap-x-6 gap-y-3">
        <SelectField
          label="Level"
          value={levelIndex}
          onChange={(event) => {
            setLevel(Number(event.target.value));
            setSelected(null);
          }}
          containerClassName="w-72"
        >
          {levels.map((l) => (
            <option key={l.level} value={l.level}>
              Level {l.level}: {l.nodes.length} {l.nodes.length === 1 ? 'node' : 'nodes'}
              {l.leaves > 0 ? `, ${l.leaves} ${l.leaves === 1 ? 'leaf' : 'leaves'}` : ''}
            </option>
          ))}
        </SelectField>
        <OrderField order={order} onChange={setOrder} />
        <p className="pb-2 text-sm text-ink-700" data-testid="tree-level-summary">
          {balanced ? 'Balanced' : 'Unbalanced'} tree of depth {levels.length - 1} with {leaves} leaves. Level {level.level}: {level.nodes.length}{' '}
          {level.nodes.length === 1 ? 'node' : 'nodes'}, {level.leaves} {level.leaves === 1 ? 'leaf' : 'leaves'}; {level.population.toLocaleString('en-GB')} of{' '}
          {root.toLocaleString('en-GB')} training vectors reach it.
        </p>
      </div>
      <div className="flex flex-col gap-4 lg:flex-row">
        <div className="min-w-0 flex-1 overflow-x-auto">
          <CodewordAtlas
            codewords={codewords}
            geometry={geometryOf(codebook)}
            usage={usage}
            order={order}
            meanRemoved={codebook.meanBits > 0}
            gain={1}
            selected={selected}
            onSelect={setSelected}
            marked={marked}
            label={`node codewords of level ${level.level}`}
          />
        </div>
        <div className="w-full shrink-0 rounded-md border border-ink-200 bg-ink-50/60 px-4 py-3 text-sm lg:w-56" aria-live="polite">
          {node === null ? (
            <p className="text-ink-600">Click a tile to read its node.</p>
          ) : (
            <dl className="grid grid-cols-[auto_1fr] gap-x-3 gap-y-1" data-testid="tree-node">
              <dt className="text-ink-600">Node</dt>
              <dd className="num text-ink-900">#{node.node}</dd>
              <dt className="text-ink-600">Parent</dt>
              <dd className="num text-ink-900">{node.parent === null ? '— (root)' : `#${node.parent}`}</dd>
              <dt className="text-ink-600">Kind</dt>
              <dd className="text-ink-900">{node.leaf ? 'Leaf' : 'Internal'}</dd>
              <dt className="text-ink-600">Population</dt>
              <dd className="num text-ink-900">
                {node.usage.toLocaleString('en-GB')} ({percent(node.usage, root)})
              </dd>
              <dt className="text-ink-600">Mean</dt>
              <dd className="num text-ink-900">{codewordMean(codebook.codewords[node.node]).toFixed(1)}</dd>
            </dl>
          )}
        </div>
      </div>
    </div>
  );
}

function ResidualStages({ codebook, stages }: { codebook: CodebookDetail; stages: ResidualStageView[] }) {
  const [stageIndex, setStage] = useState(0);
  const [order, setOrder] = useState<AtlasOrder>('index');
  const [selected, setSelected] = useState<number | null>(null);
  const stage = stages[stageIndex];
  const codewords = useMemo(() => codebook.codewords.slice(stage.first, stage.first + stage.count), [stage, codebook]);
  const total = stage.usage.reduce((a, b) => a + b, 0);
  // A signed stage is drawn 128 + 127·v/scale (the server's scale), so its full swing uses the whole grey range.
  const signed = stage.scale !== null;

  return (
    <div className="flex flex-col gap-4">
      <div className="flex flex-wrap items-end gap-x-6 gap-y-3">
        <SelectField
          label="Stage"
          value={stageIndex}
          onChange={(event) => {
            setStage(Number(event.target.value));
            setSelected(null);
          }}
          containerClassName="w-72"
        >
          {stages.map((s, i) => (
            <option key={s.stage} value={i}>
              {stageName(s.stage)}: {s.count} codewords ({s.bits} {s.bits === 1 ? 'bit' : 'bits'})
            </option>
          ))}
        </SelectField>
        <OrderField order={order} onChange={setOrder} />
        <p className="pb-2 text-sm text-ink-700" data-testid="residual-stage-scale">
          {signed
            ? `${stageName(stage.stage)} holds signed corrections: mid-grey is 0, white +${stage.scale!.toFixed(1)}, black −${stage.scale!.toFixed(1)} (0..255 units).`
            : `${stageName(stage.stage)} is drawn as the blocks it reconstructs on its own.`}
        </p>
      </div>
      <div className="flex flex-col gap-4 lg:flex-row">
        <div className="min-w-0 flex-1 overflow-x-auto">
          <CodewordAtlas
            codewords={codewords}
            geometry={geometryOf(codebook)}
            usage={stage.usage}
            order={order}
            meanRemoved={signed}
            gain={signed ? 127 / stage.scale! : 1}
            selected={selected}
            onSelect={setSelected}
            label={`codewords of stage ${stage.stage}`}
          />
        </div>
        <div className="w-full shrink-0 rounded-md border border-ink-200 bg-ink-50/60 px-4 py-3 text-sm lg:w-56" aria-live="polite">
          {selected === null ? (
            <p className="text-ink-600">Click a tile to read its codeword.</p>
          ) : (
            <dl className="grid grid-cols-[auto_1fr] gap-x-3 gap-y-1" data-testid="stage-codeword">
              <dt className="text-ink-600">Codeword</dt>
              <dd className="num text-ink-900">
                #{selected} of {stageName(stage.stage).toLowerCase()}
              </dd>
              <dt className="text-ink-600">Table row</dt>
              <dd className="num text-ink-900">#{stage.first + selected}</dd>
              <dt className="text-ink-600">Usage</dt>
              <dd className="num text-ink-900">
                {stage.usage[selected].toLocaleString('en-GB')} ({percent(stage.usage[selected], total)})
              </dd>
              <dt className="text-ink-600">Mean</dt>
              <dd className="num text-ink-900">{codewordMean(codewords[selected]).toFixed(1)}</dd>
            </dl>
          )}
        </div>
      </div>
    </div>
  );
}
