import type { DecoderCostFigures } from '../../../../server/contracts';
import { Panel } from '../../../components/ui/panel';
import { formatBytes } from '../format';

const count = (v: number) => v.toLocaleString('en-GB');
/** Per-pixel figures are often fractions (a comparison a block over 16 pixels). */
const perPixel = (v: number) => (Number.isInteger(v) ? count(v) : v.toLocaleString('en-GB', { maximumFractionDigits: 3 }));

const C_TYPES = { uint8: 'uint8_t', int8: 'int8_t', int16: 'int16_t' } as const;

/**
 * What the codebook costs the device that codes or decodes with it, as the engine counts it (decoder-cost.ts and
 * structures/cost.ts): the tables it stores, the worst-case operations per pixel and per block, and the longest code
 * of a block. A firmware team weighs these beside the rate and the PSNR.
 */
export function DecoderCostPanel({ cost }: { cost: DecoderCostFigures }) {
  const rows: [string, number, number][] = [
    ['Encoder multiply-adds', cost.perPixel.encodeMultiplyAdds, cost.perBlock.encodeMultiplyAdds],
    ['Encoder comparisons', cost.perPixel.encodeComparisons, cost.perBlock.encodeComparisons],
    ['Decoder additions', cost.perPixel.decodeAdds, cost.perBlock.decodeAdds],
    ['Decoder comparisons', cost.perPixel.decodeComparisons, cost.perBlock.decodeComparisons],
  ];
  const treeNote = cost.encoderCodewords !== cost.decoderCodewords ? ` (the encoder's ${count(cost.encoderCodewords)}, every node; the decoder's ${count(cost.decoderCodewords)}, the leaves)` : '';
  return (
    <Panel
      title="Decoder cost"
      titleId="codebook-decoder-cost"
      description={`Worst case for one block of ${cost.pixelsPerBlock} pixels (${cost.dimension} components); the block mean's removal and the pixel clamp, the same for every structure, are not counted`}
    >
      <div className="grid gap-6 lg:grid-cols-3" data-testid="decoder-cost">
        <section aria-label="Tables">
          <h3 className="text-sm font-semibold text-ink-900">Tables</h3>
          <dl className="mt-2 grid grid-cols-[auto_1fr] gap-x-4 gap-y-1 text-sm">
            <dt className="text-ink-700">Encoder, float32</dt>
            <dd className="num">{formatBytes(cost.encoderFloatBytes)}</dd>
            <dt className="text-ink-700">Decoder, float32</dt>
            <dd className="num">{formatBytes(cost.decoderFloatBytes)}</dd>
            {cost.firmware.map((f) => (
              <div key={f.type} className="contents">
                <dt className="text-ink-700">Firmware, {C_TYPES[f.type]}</dt>
                <dd className="num">
                  {formatBytes(f.codewordBytes + f.structureBytes)}
                  {f.structureBytes > 0 && <span className="text-ink-600">{` (codewords ${count(f.codewordBytes)}, ${cost.structure === 'tree' ? 'tree' : cost.structure === 'residual' ? 'stages' : 'code'} ${count(f.structureBytes)})`}</span>}
                  {f.saturated > 0 && <span className="text-ink-600">{`, ${count(f.saturated)} saturated`}</span>}
                </dd>
              </div>
            ))}
          </dl>
          <p className="mt-2 text-xs text-ink-600">{`${count(cost.decoderCodewords)} codewords a decoder reads${treeNote}.`}</p>
        </section>
        <section aria-label="Operations">
          <h3 className="text-sm font-semibold text-ink-900">Operations</h3>
          <table className="mt-2 w-full text-sm">
            <thead>
              <tr className="text-left text-xs text-ink-600">
                <th scope="col" className="font-medium" />
                <th scope="col" className="text-right font-medium">per pixel</th>
                <th scope="col" className="text-right font-medium">per block</th>
              </tr>
            </thead>
            <tbody>
              {rows.map(([label, pixel, block]) => (
                <tr key={label}>
                  <th scope="row" className="text-left font-normal text-ink-700">{label}</th>
                  <td className="num text-right">{perPixel(pixel)}</td>
                  <td className="num text-right">{count(block)}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </section>
        <section aria-label="Code length">
          <h3 className="text-sm font-semibold text-ink-900">Longest code</h3>
          <p className="mt-2 text-sm text-ink-700">
            <span className="num text-ink-900" data-testid="decoder-cost-max-bits">{cost.maxBitsPerBlock}</span> bits per block
            {cost.meanBits > 0 ? ` (index ${cost.maxIndexBits} + mean ${cost.meanBits})` : ''}, {(cost.maxBitsPerBlock / cost.pixelsPerBlock).toFixed(3)}{'\u2009'}bpp at worst;{' '}
            {cost.fixedRate ? 'every block the same length' : 'blocks vary in length'}.
          </p>
        </section>
      </div>
    </Panel>
  );
}
