import { useState } from 'react';
import { Link } from 'react-router-dom';
import { DEFAULT_BERS, STUDIO_CHANNEL_SEEDS } from '../../../../server/contracts';
import { ChannelChart } from '../../../components/charts/channel-chart';
import { Button } from '../../../components/ui/button';
import { SelectField } from '../../../components/ui/field';
import { ErrorState, LoadingState } from '../../../components/ui/states';
import { href } from '../../../config/routes';
import { messageOf } from '../../../lib/api-client';
import { useChannelCurve } from '../api/get-channel';
import { useReorderCodebook } from '../api/reorder-codebook';
import { formatBpp, formatDb } from '../format';

const SEED_CHOICES = [1, STUDIO_CHANNEL_SEEDS.default, STUDIO_CHANNEL_SEEDS.max] as const;
const RESYNC_CHOICES = [0, 1, 4, 16] as const;
const REORDER_BERS = [1e-3, 1e-2, 1e-1] as const;

/**
 * PSNR against bit-error rate on the held-out images: the raw payload sent through a binary symmetric channel, decoded
 * and measured over seeds, beside the closed form's expectation. Computed when asked (it takes seconds), then kept.
 */
export function ChannelCurveView({ teamId, codebookId }: { teamId: number; codebookId: number }) {
  const [seeds, setSeeds] = useState<number>(STUDIO_CHANNEL_SEEDS.default);
  const [resync, setResync] = useState(0);
  const [asked, setAsked] = useState(false);
  const curve = useChannelCurve(teamId, codebookId, DEFAULT_BERS, seeds, resync, asked);

  return (
    <div className="flex flex-col gap-4">
      <div className="flex flex-wrap items-end gap-x-6 gap-y-3">
        <SelectField label="Seeds per rate" value={seeds} onChange={(event) => setSeeds(Number(event.target.value))} containerClassName="w-32">
          {SEED_CHOICES.map((s) => (
            <option key={s} value={s}>
              {s}
            </option>
          ))}
        </SelectField>
        <SelectField label="Marker every" value={resync} onChange={(event) => setResync(Number(event.target.value))} containerClassName="w-40">
          {RESYNC_CHOICES.map((r) => (
            <option key={r} value={r}>
              {r === 0 ? 'no markers' : `${r} block row${r > 1 ? 's' : ''}`}
            </option>
          ))}
        </SelectField>
        <Button variant="secondary" onClick={() => setAsked(true)} pending={asked && curve.isFetching} disabled={asked && curve.isFetching}>
          Simulate the channel
        </Button>
      </div>
      {asked && curve.isPending && <LoadingState label="Sending the held-out images through the channel…" />}
      {curve.isError && <ErrorState message={messageOf(curve.error)} onRetry={() => void curve.refetch()} />}
      {curve.data && (
        <>
          <ChannelChart
            title="PSNR against bit-error rate"
            points={curve.data.points.map((p) => ({ ber: p.ber, measured: p.psnr, expected: p.expectedPsnr }))}
          />
          <p className="text-sm text-ink-700">
            {curve.data.images} held-out images, raw payload {formatBpp(curve.data.rawBpp)} ({curve.data.payloadBytes.toLocaleString('en-GB')} bytes
            {curve.data.resyncRows > 0 ? `, markers included` : ''}); noiseless PSNR {formatDb(curve.data.noiselessPsnr)}. The header is taken as received intact;
            a flipped index bit damages one block only, so markers add bytes without limiting anything on this payload.
            {curve.data.expectedNote && ` Expected curve not shown: ${curve.data.expectedNote}.`}
          </p>
          <table className="w-full max-w-xl border-collapse text-left text-sm" data-testid="channel-table">
            <thead>
              <tr className="border-b border-ink-200 text-ink-600">
                <th className="py-1 pr-4 font-medium">BER</th>
                <th className="py-1 pr-4 font-medium">PSNR measured</th>
                <th className="py-1 pr-4 font-medium">PSNR expected</th>
                <th className="py-1 font-medium">Bits flipped</th>
              </tr>
            </thead>
            <tbody>
              {curve.data.points.map((p) => (
                <tr key={p.ber} className="border-b border-ink-100">
                  <td className="num py-1 pr-4">{p.ber.toExponential(0)}</td>
                  <td className="num py-1 pr-4">{formatDb(p.psnr)}</td>
                  <td className="num py-1 pr-4">{p.expectedPsnr === null ? '—' : formatDb(p.expectedPsnr)}</td>
                  <td className="num py-1">{p.flips.toLocaleString('en-GB')}</td>
                </tr>
              ))}
            </tbody>
          </table>
        </>
      )}
    </div>
  );
}

/** Index assignment for a noisy channel: a new codebook with the same codewords reordered; this one stays as it is. */
export function ReorderAction({ teamId, codebookId }: { teamId: number; codebookId: number }) {
  const [ber, setBer] = useState<number>(1e-2);
  const reorder = useReorderCodebook(teamId, codebookId);
  const result = reorder.data;

  return (
    <div className="flex flex-col gap-3">
      <div className="flex flex-wrap items-end gap-x-6 gap-y-3">
        <SelectField label="Design bit-error rate" value={ber} onChange={(event) => setBer(Number(event.target.value))} containerClassName="w-48">
          {REORDER_BERS.map((b) => (
            <option key={b} value={b}>
              {b.toExponential(0)}
            </option>
          ))}
        </SelectField>
        <Button variant="secondary" onClick={() => reorder.mutate(ber)} pending={reorder.isPending} disabled={reorder.isPending}>
          Reorder for the channel
        </Button>
      </div>
      {reorder.isError && <p className="text-sm text-danger-700" role="alert">{messageOf(reorder.error)}</p>}
      {result && (
        <p className="text-sm text-ink-700" role="status">
          Expected channel distortion at BER {result.ber}: {result.channelDistortionBefore.toPrecision(4)} → {result.channelDistortionAfter.toPrecision(4)} per component
          ({result.swaps} switches). Saved as{' '}
          <Link to={href.teamCodebook(teamId, result.codebook.id)} className="font-medium text-ink-900 underline">
            {result.codebook.name}
          </Link>
          .
        </p>
      )}
    </div>
  );
}
