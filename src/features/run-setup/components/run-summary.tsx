import type { ReactNode } from 'react';
import { plural } from '../../../lib/format';
import { formatBpp, formatByteSize, formatCompactBytes, groupDigits } from '../format';
import type { RunPlan } from '../run-plan';

function Row({ term, children, note }: { term: ReactNode; children: ReactNode; note?: ReactNode }) {
  return (
    <div className="grid grid-cols-[minmax(0,1fr)_auto] items-baseline gap-x-3 border-b border-ink-100 py-2 last:border-b-0">
      <dt className="text-sm text-ink-700">{term}</dt>
      <dd className="num text-right text-sm font-medium text-ink-950">{children}</dd>
      {note && <dd className="col-span-2 text-xs text-ink-600">{note}</dd>}
    </div>
  );
}

function Bytes({ bytes }: { bytes: number }) {
  const { exact, approx } = formatByteSize(bytes);
  return (
    <>
      {exact}
      {approx && <span className="ml-1.5 font-normal text-ink-600">({approx})</span>}
    </>
  );
}

/**
 * What the chosen settings mean before anything is trained: codebook sizes, vector dimension, fixed rate, table
 * sizes and the training vectors the images give. Every figure follows from the definitions: K = 2^b,
 * d = w·h·channels, rate (b + m)/(w·h) bpp, K·d·4 bytes as float32 and K·d as 8-bit samples.
 */
export function RunSummary({ plan, patch, meanBits, stride = null }: { plan: RunPlan; patch: { width: number; height: number }; meanBits: number; stride?: number | null }) {
  const single = plan.sizes.length === 1 ? plan.sizes[0] : null;
  return (
    <section aria-labelledby="run-summary-title" className="flex flex-col gap-4">
      <h2 id="run-summary-title" className="text-base font-semibold text-ink-900">
        What this run makes
      </h2>
      <dl aria-label="Run summary">
        <Row term="Codebook size" note={single ? undefined : plan.sizes.length > 1 ? `${plan.sizes.length} codebooks, one per b` : undefined}>
          {plan.sizes.length === 0
            ? '—'
            : single
              ? `${groupDigits(single.size)} codewords`
              : `${groupDigits(plan.sizes[0].size)} … ${groupDigits(plan.sizes.at(-1)!.size)} codewords`}
        </Row>
        <Row term="Vector dimension d" note={plan.dimension > 0 ? `${patch.width} × ${patch.height} × ${plan.channels} ${plan.channels === 1 ? 'channel (luma)' : 'channels (RGB)'}` : undefined}>
          {plan.dimension > 0 ? plan.dimension : '—'}
        </Row>
        <Row term="Fixed rate" note={meanBits > 0 ? `index bits + ${meanBits} mean bits per block` : 'index bits per block over its pixels'}>
          {single ? `${formatBpp(single.bppFixed)} bpp` : plan.sizes.length > 1 ? `${formatBpp(plan.sizes[0].bppFixed)} … ${formatBpp(plan.sizes.at(-1)!.bppFixed)} bpp` : '—'}
        </Row>
        {single && (
          <>
            <Row term="Codebook as float32">
              <Bytes bytes={single.bytesFloat32} />
            </Row>
            <Row term="Codebook as 8-bit">
              <Bytes bytes={single.bytes8} />
            </Row>
          </>
        )}
        <Row
          term="Training vectors"
          note={
            plan.availableVectors > plan.trainingVectors
              ? `${groupDigits(plan.availableVectors)} patches available, capped by the vector cap`
              : `${stride === null ? 'non-overlapping ' : ''}${patch.width}×${patch.height} patches${stride === null ? '' : ` every ${stride} px`} of ${plural(plan.training.length, 'training image')}`
          }
        >
          {groupDigits(plan.trainingVectors)}
        </Row>
        <Row term="Held-out images">{plan.heldOut.length}</Row>
      </dl>

      {plan.sizes.length > 1 && (
        <div className="overflow-hidden rounded-md border border-ink-200">
          <table className="w-full text-xs whitespace-nowrap">
            <caption className="sr-only">Codebooks of the sweep</caption>
            <thead className="bg-ink-50 text-xs tracking-[0.04em] text-ink-600 uppercase">
              <tr>
                <th scope="col" className="px-2 py-1.5 text-left font-medium normal-case">
                  b
                </th>
                <th scope="col" className="px-2 py-1.5 text-right font-medium">
                  Codewords
                </th>
                <th scope="col" className="px-2 py-1.5 text-right font-medium">
                  bpp
                </th>
                <th scope="col" className="px-2 py-1.5 text-right font-medium">
                  float32
                </th>
                <th scope="col" className="px-2 py-1.5 text-right font-medium">
                  8-bit
                </th>
              </tr>
            </thead>
            <tbody className="num">
              {plan.sizes.map((size) => (
                <tr key={size.bits} className="border-t border-ink-100">
                  <td className="px-2 py-1">{size.bits}</td>
                  <td className="px-2 py-1 text-right">{groupDigits(size.size)}</td>
                  <td className="px-2 py-1 text-right">{formatBpp(size.bppFixed)}</td>
                  <td className="px-2 py-1 text-right">{formatCompactBytes(size.bytesFloat32)}</td>
                  <td className="px-2 py-1 text-right">{formatCompactBytes(size.bytes8)}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </div>
      )}

      {plan.problems.length > 0 ? (
        <div role="status" aria-label="Problems to fix" className="rounded-md border border-danger-200 bg-danger-50 px-3.5 py-2.5">
          <p className="text-sm font-semibold text-danger-700">Before this can run</p>
          <ul className="mt-1 flex flex-col gap-1 text-sm text-ink-800">
            {plan.problems.map((problem) => (
              <li key={problem.message} className="flex items-start gap-1.5">
                <span aria-hidden="true" className="mt-[0.45rem] inline-block size-1.5 shrink-0 rounded-full bg-danger-600" />
                {problem.message}
              </li>
            ))}
          </ul>
        </div>
      ) : (
        <p role="status" className="rounded-md border border-success-200 bg-success-50 px-3.5 py-2.5 text-sm text-success-700">
          Ready to train: every codebook has enough vectors, and no image is on both sides.
        </p>
      )}
    </section>
  );
}
