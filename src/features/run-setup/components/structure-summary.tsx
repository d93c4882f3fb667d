import { greedyTreePlan, parseStages, structureCost, TREE_MAX_DEPTH, type RunStructure, type StructureCost, type TreeGrowthKind } from '../../../../server/contracts';
import { groupDigits } from '../format';

/**
 * The chosen structure at the run's highest b, before anything is trained: index bits per block and their rate, the
 * table the device stores and the encoder's multiply-adds per block, from the engine's one cost formula
 * (structures/cost.ts). A greedy tree's shape is known only once it is trained, so its figures are bounds: the
 * largest tree it may grow (the vocabulary's greedyTreePlan) with paths as long as any tree's (TREE_MAX_DEPTH), and a
 * mean path of at most b bits. Null figures while the fields do not yet describe a structure.
 */
export function structureFigures(
  structure: RunStructure, bits: number, stages: number, mBest: number, dimension: number, growth: TreeGrowthKind = 'balanced',
): { stageBits: number[]; cost: StructureCost; bounded: boolean } | null {
  if (!Number.isInteger(bits) || bits < 0 || dimension <= 0) return null;
  if (structure === 'full') return { stageBits: [bits], cost: structureCost({ kind: 'full', size: 2 ** bits }, dimension), bounded: false };
  if (structure === 'tree' && growth === 'greedy') {
    return { stageBits: [bits], cost: structureCost({ kind: 'tree', leaves: greedyTreePlan(bits).leaves, depth: TREE_MAX_DEPTH }, dimension), bounded: true };
  }
  if (structure === 'tree') return { stageBits: [bits], cost: structureCost({ kind: 'tree', leaves: 2 ** bits, depth: bits }, dimension), bounded: false };
  const parsed = parseStages(String(stages), bits);
  if ('error' in parsed) return null;
  return { stageBits: parsed.bits, cost: structureCost({ kind: 'residual', bits: parsed.bits, m: Number.isInteger(mBest) && mBest > 0 ? mBest : 1 }, dimension), bounded: false };
}

export function StructureSummary(props: { structure: RunStructure; growth?: TreeGrowthKind; bits: number; stages: number; mBest: number; dimension: number; pixelsPerBlock: number }) {
  const figures = structureFigures(props.structure, props.bits, props.stages, props.mBest, props.dimension, props.growth);
  if (!figures || props.pixelsPerBlock <= 0) return <p className="text-sm text-ink-600">Choose b and the stages to see what this structure costs.</p>;
  const { cost, stageBits, bounded } = figures;
  if (bounded) {
    // Descent costs 2·d multiply-adds a level, so the mean cost follows the mean path (at most b bits after pruning).
    return (
      <dl aria-label="Structure cost" className="grid grid-cols-[auto_1fr] gap-x-4 gap-y-1 text-sm">
        <dt className="text-ink-700">Index rate at b = {props.bits}</dt>
        <dd className="num">{`at most ${props.bits} bits per block on average, ${(props.bits / props.pixelsPerBlock).toFixed(4)} bpp; a path at most ${cost.maxIndexBits} bits`}</dd>
        <dt className="text-ink-700">Table size</dt>
        <dd className="num">{`at most ${groupDigits(cost.tableCodewords)} codewords (decoder reads at most ${groupDigits(cost.decoderCodewords)})`}</dd>
        <dt className="text-ink-700">Encoder cost</dt>
        <dd className="num">{`at most ${groupDigits(2 * props.dimension * props.bits)} multiply-adds per block on average, ${groupDigits(cost.encodeMultiplyAdds)} on the longest path`}</dd>
      </dl>
    );
  }
  return (
    <dl aria-label="Structure cost" className="grid grid-cols-[auto_1fr] gap-x-4 gap-y-1 text-sm">
      <dt className="text-ink-700">Index rate at b = {props.bits}</dt>
      <dd className="num">
        {`${cost.maxIndexBits} bits per block, ${(cost.maxIndexBits / props.pixelsPerBlock).toFixed(4)} bpp`}
        {props.structure === 'residual' ? ` (stages ${stageBits.join(' + ')})` : ''}
      </dd>
      <dt className="text-ink-700">Table size</dt>
      <dd className="num">{`${groupDigits(cost.tableCodewords)} codewords${cost.decoderCodewords !== cost.tableCodewords ? ` (decoder reads ${groupDigits(cost.decoderCodewords)})` : ''}`}</dd>
      <dt className="text-ink-700">Encoder cost</dt>
      <dd className="num">{`${groupDigits(cost.encodeMultiplyAdds)} multiply-adds per block`}</dd>
    </dl>
  );
}
