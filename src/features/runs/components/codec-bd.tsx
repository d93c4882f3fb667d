import { BD_METHOD_LABELS, type RunCurve } from '../../../../server/contracts';
import { bdFootnote, BdRows, CODEC_LABELS } from '../../../components/bd/bd-figures';

/** The run's codebooks (actual rate) against JPEG, WebP and AVIF on the same held-out images, as the server computed them. */
export function CodecBd({ curve }: { curve: RunCurve }) {
  const rows = curve.bd.againstBaselines.map((row) => ({ ...row, key: row.codec, referenceName: CODEC_LABELS[row.codec], testName: curve.run.name }));
  return (
    <div className="overflow-x-auto">
      <BdRows rows={rows} caption="BD-rate and BD-PSNR of this run's codebooks against each codec" showTest={false} />
      <p className="mt-3 text-xs text-ink-600" data-testid="bd-method">
        {bdFootnote(BD_METHOD_LABELS[curve.bd.method])} The codebooks are on the actual rate (bytes of their coded files), as the codecs are. Other
        methods and rate definitions: the compare page.
      </p>
    </div>
  );
}
