import { parseStages, structureCost, type RunStructure, type StructureCost } from '../../../../server/contracts';
import { groupDigits } from '../format';

/**
 * The chosen structure at the run's highest b, before anything is trained: index bits per block and their rate, the
 * table the device stores and the encoder's multiply-adds per block, from the engine's one cost formula
 * (structures/cost.ts). Null figures while the fields do not yet describe a structure.
 */
export function structureFigures(structure: RunStructure, bits: number, stages: number, mBest: number, dimension: number): { stageBits: number[]; cost: StructureCost } | null {
  if (!Number.isInteger(bits) || bits < 0 || dimension <= 0) return null;
  if (structure === 'full') return { stageBits: [bits], cost: structureCost({ kind: 'full', size: 2 ** bits }, dimension) };
  if (structure === 'tree') return { stageBits: [bits], cost: structureCost({ kind: 'tree', leaves: 2 ** bits, depth: bits }, dimension) };
  const parsed = parseStages(String(stages), bits);
  if ('error' in parsed) return null;
  return { stageBits: parsed.bits, cost: structureCost({ kind: 'residual', bits: parsed.bits, m: Number.isInteger(mBest) && mBest > 0 ? mBest : 1 }, dimension) };
}

export function StructureSummary(props: { structure: RunStructure; bits: number; stages: number; mBest: number; dimension: number; pixelsPerBlock: number }) {
  const figures = structureFigures(props.structure, props.bits, props.stages, props.mBest, props.dimension);
  if (!figures || props.pixelsPerBlock <= 0) return <p className="text-sm text-ink-600">Choose b and the stages to see what this structure costs.</p>;
  const { cost, stageBits } = figures;
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
