import { useState } from 'react';
import { EXACT } from '../../../../server/contracts';
import { Button } from '../../../components/ui/button';
import { ErrorState } from '../../../components/ui/states';
import { messageOf } from '../../../lib/api-client';
import { useFirmwareRounding } from '../api/get-channel';

const db = (v: number | null) => (v === null ? EXACT.text : `${v.toFixed(2)}\u2009dB`);

/**
 * Before the firmware bundle is exported: what its fixed-point table costs on the held-out images, the engine's float
 * decoder against the table's. Measured when asked (it decodes every held-out image twice).
 */
export function FirmwareRounding({ teamId, codebookId, hasHeldOut }: { teamId: number; codebookId: number; hasHeldOut: boolean }) {
  const [asked, setAsked] = useState(false);
  const rounding = useFirmwareRounding(teamId, codebookId, asked);
  if (!hasHeldOut) return <p className="text-sm text-ink-700">An imported codebook has no held-out images here; `cellwright export --target c --images DIR` measures the rounding cost.</p>;
  if (rounding.isError) return <ErrorState message={messageOf(rounding.error)} onRetry={() => void rounding.refetch()} />;
  const r = rounding.data;
  if (!r) {
    return (
      <Button variant="secondary" size="sm" onClick={() => setAsked(true)} pending={asked} disabled={asked}>
        Measure the fixed-point rounding cost
      </Button>
    );
  }
  return (
    <p className="text-sm text-ink-700" data-testid="firmware-rounding">
      Fixed-point table {r.tableType}
      {r.fractionBits ? ` (Q${r.fractionBits})` : ''}, {r.tableBytes.toLocaleString('en-GB')} bytes: on {r.images} held-out images PSNR {db(r.psnrFloat)} with
      the float decoder, {db(r.psnrFixed)} with the table, a cost of <span className="num text-ink-900">{r.costDb.toFixed(3)}{'\u2009'}dB</span> ({r.differing.toLocaleString('en-GB')} output
      values differ{r.saturated ? `; ${r.saturated} entries saturated` : ''}).
    </p>
  );
}
