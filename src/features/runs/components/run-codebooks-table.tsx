import { Link } from 'react-router-dom';
import { STRUCTURE_LABELS, type RunDetail } from '../../../../server/contracts';
import { href } from '../../../config/routes';
import { formatMse } from '../format';

/** The codebooks a run trained, smallest first, each linking to its page. */
export function RunCodebooksTable({ teamId, codebooks }: { teamId: number; codebooks: RunDetail['codebooks'] }) {
  return (
    <table className="w-full border-collapse text-left text-sm">
      <caption className="sr-only">Codebooks trained by this run</caption>
      <thead>
        <tr className="border-b border-ink-200 text-xs tracking-[0.06em] text-ink-600 uppercase">
          <th scope="col" className="py-2 pr-3 font-medium">Codebook</th>
          <th scope="col" className="py-2 pr-3 font-medium">Structure</th>
          <th scope="col" className="py-2 pr-3 text-right font-medium">Iterations</th>
          <th scope="col" className="py-2 pr-3 text-right font-medium">Training MSE</th>
          <th scope="col" className="py-2 font-medium">SHA-256</th>
        </tr>
      </thead>
      <tbody>
        {[...codebooks]
          .sort((a, b) => (a.lambda ?? -1) - (b.lambda ?? -1) || a.size - b.size)
          .map((c) => (
            <tr key={c.id} className="border-b border-ink-100 last:border-b-0">
              <td className="py-2 pr-3">
                <Link to={href.teamCodebook(teamId, c.id)} className="num font-medium text-ink-950 hover:text-ember-700 hover:underline">
                  K = {c.size} · b = {c.bits}
                </Link>
              </td>
              <td className="py-2 pr-3">
                {STRUCTURE_LABELS[c.structure]}
                {c.lambda !== null && <span className="num text-ink-600">{` · λ = ${c.lambda}`}</span>}
              </td>
              <td className="num py-2 pr-3 text-right">{c.iterations}</td>
              <td className="num py-2 pr-3 text-right">{formatMse(c.distortion)}</td>
              <td className="num py-2 text-xs text-ink-600" title={c.checksum}>
                {c.checksum.slice(0, 16)}…
              </td>
            </tr>
          ))}
      </tbody>
    </table>
  );
}
