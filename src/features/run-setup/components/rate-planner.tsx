import { useState } from 'react';
import { MIN_VECTORS_PER_CODEWORD, PLAN_TOLERANCE, planRates, type ColorMode, type PlanRow } from '../../../../server/contracts';
import { Button } from '../../../components/ui/button';
import { TextField } from '../../../components/ui/field';
import { formatBpp, formatCompactBytes, groupDigits } from '../format';

/** Rows shown before "Show all": enough to see the trade-offs without a wall of numbers. */
const FIRST_ROWS = 12;

const vectorsText = (r: PlanRow) => (r.vectorsPerCodeword === null ? '—' : groupDigits(Math.floor(r.vectorsPerCodeword * 10) / 10));

/**
 * The rate planner: given a target rate and the chosen training images, every configuration (patch shape × b ×
 * mean bits × structure) that reaches it, with its table and the training vectors each codeword would get. The
 * arithmetic is server/engine/rate-plan.ts; picking a row fills the form's patch, mean bits and b.
 */
export function RatePlanner({
  images,
  stride,
  color,
  maxVectors,
  onPick,
}: {
  images: readonly { width: number; height: number }[];
  /** The form's patch stride; absent: each shape's own side (non-overlapping). */
  stride?: number;
  color: ColorMode;
  maxVectors: number;
  onPick: (row: PlanRow) => void;
}) {
  const [target, setTarget] = useState('0.5');
  const [showAll, setShowAll] = useState(false);
  const targetBpp = Number(target);
  const valid = target.trim() !== '' && Number.isFinite(targetBpp) && targetBpp > 0;
  const rows = valid ? planRates({ targetBpp, color, images, stride, maxVectors: Number.isInteger(maxVectors) && maxVectors > 0 ? maxVectors : undefined }) : [];
  const shown = showAll ? rows : rows.slice(0, FIRST_ROWS);

  return (
    <div className="flex flex-col gap-3">
      <TextField
        label="Target rate (bpp)"
        type="number"
        step="any"
        min={0}
        inputMode="decimal"
        containerClassName="max-w-xs"
        value={target}
        onChange={(e) => setTarget(e.target.value)}
        error={valid ? undefined : 'A rate above 0 bits per pixel.'}
        hint={`Configurations at most this rate and within ${Math.round(PLAN_TOLERANCE * 100)} % below it, fixed-length: (b + m)/(w·h).`}
      />
      {valid && rows.length === 0 && <p className="text-sm text-ink-600">No patch shape reaches this rate with b in the allowed range.</p>}
      {rows.length > 0 && (
        <div className="overflow-x-auto">
          <table className="w-full text-sm" aria-label="Configurations that reach the target rate">
            <thead className="text-left text-xs text-ink-600 uppercase">
              <tr className="border-b border-ink-200">
                <th scope="col" className="py-1.5 pr-3">Structure</th>
                <th scope="col" className="py-1.5 pr-3">Patch</th>
                <th scope="col" className="py-1.5 pr-3 text-right">b</th>
                <th scope="col" className="py-1.5 pr-3 text-right">m</th>
                <th scope="col" className="py-1.5 pr-3 text-right">bpp</th>
                <th scope="col" className="py-1.5 pr-3 text-right">Codewords</th>
                <th scope="col" className="py-1.5 pr-3 text-right">Table</th>
                <th scope="col" className="py-1.5 pr-3 text-right">Vectors / codeword</th>
                <th scope="col" className="py-1.5" />
              </tr>
            </thead>
            <tbody>
              {shown.map((r) => {
                // Spelled "4 × 8 patches" (spaced), so the name never reads as one of the form's own shape buttons ("4×4").
                const name = `${r.structureLabel}, ${r.patch.width} × ${r.patch.height} patches, b = ${r.bits}${r.meanBits > 0 ? `, m = ${r.meanBits}` : ''}`;
                return (
                  <tr key={`${r.structure}-${r.patch.width}x${r.patch.height}-${r.meanBits}`} className="border-b border-ink-100">
                    <td className="py-1.5 pr-3">{r.structureLabel}</td>
                    <td className="num py-1.5 pr-3">{`${r.patch.width}×${r.patch.height}`}</td>
                    <td className="num py-1.5 pr-3 text-right">{r.bits}</td>
                    <td className="num py-1.5 pr-3 text-right">{r.meanBits}</td>
                    <td className="num py-1.5 pr-3 text-right">{formatBpp(r.bpp)}</td>
                    <td className="num py-1.5 pr-3 text-right">{groupDigits(r.codewords)}</td>
                    <td className="num py-1.5 pr-3 text-right">{formatCompactBytes(r.tableBytes)}</td>
                    <td className={`num py-1.5 pr-3 text-right ${r.fewVectors ? 'text-danger-700' : ''}`}>
                      {vectorsText(r)}
                      {r.fewVectors && <span className="ml-1">{`⚠ under ${MIN_VECTORS_PER_CODEWORD}`}</span>}
                    </td>
                    <td className="py-1.5 text-right">
                      <Button variant="secondary" size="sm" aria-label={`Use ${name}`} onClick={() => onPick(r)}>
                        Use
                      </Button>
                    </td>
                  </tr>
                );
              })}
            </tbody>
          </table>
        </div>
      )}
      {rows.length > FIRST_ROWS && !showAll && (
        <div>
          <Button variant="ghost" size="sm" onClick={() => setShowAll(true)}>
            {`Show all ${rows.length} configurations`}
          </Button>
        </div>
      )}
      {images.length === 0 && rows.length > 0 && <p className="text-sm text-ink-600">Choose the training images to see how many vectors each codeword would get.</p>}
      {rows.some((r) => r.fewVectors) && (
        <p className="text-sm text-ink-700">
          {`⚠ Fewer than ${MIN_VECTORS_PER_CODEWORD} training vectors a codeword: most cells would be fitted to a handful of patches and the held-out distortion would run well above the training one.`}
        </p>
      )}
    </div>
  );
}
