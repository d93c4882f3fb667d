import type { ReactNode } from 'react';
import { EXACT, type ReleaseReport } from '../../../../server/contracts';
import { ChannelChart } from '../../../components/charts/channel-chart';
import { formatDateTime } from '../../../lib/format';
import { ReviewThread } from './review-thread';

const thin = '\u2009';
const db = (v: number | null) => (v === null ? EXACT.text : `${v.toFixed(2)}${thin}dB`);
const bpp = (v: number) => `${v.toFixed(3)}${thin}bpp`;
const mse = (v: number) => (v >= 100 ? v.toFixed(1) : v.toPrecision(3));

/**
 * One section of the printable release report. The page renders its sections in order from a list, so a further
 * section is one more entry built from one more report field.
 */
export type ReportSection = { id: string; title: string; content: ReactNode };

export function ReportSectionView({ section, number }: { section: ReportSection; number: number }) {
  return (
    <section aria-labelledby={`report-${section.id}`} className="report-section break-inside-avoid-page border-t border-ink-200 py-6" data-section={section.id}>
      <h2 id={`report-${section.id}`} className="mb-3 text-lg font-semibold text-ink-950">
        {number}. {section.title}
      </h2>
      {section.content}
    </section>
  );
}

function Facts({ rows }: { rows: [string, ReactNode][] }) {
  return (
    <dl className="grid grid-cols-[minmax(10rem,max-content)_1fr] gap-x-6 gap-y-1.5 text-sm">
      {rows.map(([k, v]) => (
        <div key={k} className="contents">
          <dt className="text-ink-600">{k}</dt>
          <dd className="font-mono text-ink-900 break-all">{v}</dd>
        </div>
      ))}
    </dl>
  );
}

const value = (v: unknown) => (typeof v === 'object' && v !== null ? JSON.stringify(v) : String(v));

export function ConfigurationSection({ report }: { report: ReleaseReport }) {
  const c = report.codebook;
  const rows: [string, ReactNode][] = [
    ['Codebook', `${c.name} (#${c.id}, ${c.source === 'trained' ? `trained in run ${c.origin}` : 'imported'})`],
    ['Size', `K = ${c.size} (${c.bits} bits an index)`],
    ['Patch', `${c.patch.width} × ${c.patch.height}, ${report.configuration.color}, dimension ${c.dimension}`],
    ['Mean bits', String(c.meanBits)],
    ['Preprocessing', value(report.configuration.preprocessing)],
    ...Object.entries(report.configuration.training).map(([k, v]): [string, ReactNode] => [`Training · ${k}`, value(v)]),
  ];
  return <Facts rows={rows} />;
}

export function HashesSection({ report }: { report: ReleaseReport }) {
  const h = report.hashes;
  return (
    <Facts
      rows={[
        ['Training data', h.trainingData ? `${h.trainingData} (${h.trainingImages} images)` : 'Imported codebook: its training data is not in the studio'],
        ['Held-out images', `${h.heldOut} (${h.heldOutImages} images)`],
      ]}
    />
  );
}

export function ImagesSection({ report }: { report: ReleaseReport }) {
  return (
    <table className="w-full border-collapse text-left text-sm" data-testid="report-images">
      <caption className="sr-only">Each held-out image coded with the released codebook</caption>
      <thead>
        <tr className="border-b border-ink-200 text-ink-600">
          <th className="py-1.5 pr-3 font-medium">Image</th>
          <th className="py-1.5 pr-3 text-right font-medium">Size</th>
          <th className="py-1.5 pr-3 text-right font-medium">Fixed rate</th>
          <th className="py-1.5 pr-3 text-right font-medium">Actual rate</th>
          <th className="py-1.5 pr-3 text-right font-medium">MSE</th>
          <th className="py-1.5 pr-3 text-right font-medium">PSNR</th>
          <th className="py-1.5 text-right font-medium">SSIM</th>
        </tr>
      </thead>
      <tbody>
        {report.images.map((m) => (
          <tr key={m.imageId} className="border-b border-ink-100 tabular-nums">
            <td className="py-1.5 pr-3">{m.fileName}</td>
            <td className="py-1.5 pr-3 text-right">
              {m.width} × {m.height}
            </td>
            <td className="py-1.5 pr-3 text-right">{bpp(m.bppFixed)}</td>
            <td className="py-1.5 pr-3 text-right">{bpp(m.bppActual)}</td>
            <td className="py-1.5 pr-3 text-right">{mse(m.mse)}</td>
            <td className="py-1.5 pr-3 text-right">{db(m.psnr)}</td>
            <td className="py-1.5 text-right">{m.ssim === null ? '—' : m.ssim.toFixed(4)}</td>
          </tr>
        ))}
      </tbody>
    </table>
  );
}

/** A tile cut out of a full-size view by position, at `scale` × its pixels (an <img>, which every browser prints). */
function TileCrop({ src, tile, scale, alt }: { src: string; tile: ReleaseReport['worstTiles']['tiles'][number]; scale: number; alt: string }) {
  return (
    <div className="relative overflow-hidden border border-ink-200" style={{ width: tile.width * scale, height: tile.height * scale }}>
      <img
        src={src}
        alt={alt}
        className="absolute max-w-none"
        style={{ left: -tile.x * scale, top: -tile.y * scale, width: tile.imageWidth * scale, height: tile.imageHeight * scale, imageRendering: 'pixelated' }}
      />
    </div>
  );
}

export function WorstTilesSection({ report, viewUrl }: { report: ReleaseReport; viewUrl: (imageId: number, view: 'original' | 'reconstruction') => string }) {
  const { tiles, tileSize, imagesMeasured } = report.worstTiles;
  return (
    <>
      <p className="mb-3 text-sm text-ink-700">
        The {tiles.length} tiles of {tileSize} × {tileSize} pixels with the lowest PSNR over {imagesMeasured} held-out images: original left, decoded right.
      </p>
      <ul className="grid grid-cols-2 gap-4 sm:grid-cols-4" data-testid="worst-tiles">
        {tiles.map((t) => (
          <li key={`${t.imageId}-${t.x}-${t.y}`} className="break-inside-avoid text-xs text-ink-700">
            <div className="flex gap-1">
              <TileCrop src={viewUrl(t.imageId, 'original')} tile={t} scale={2} alt={`${t.fileName} at ${t.x}, ${t.y}: original`} />
              <TileCrop src={viewUrl(t.imageId, 'reconstruction')} tile={t} scale={2} alt={`${t.fileName} at ${t.x}, ${t.y}: decoded`} />
            </div>
            <p className="mt-1">
              {t.fileName} ({t.x}, {t.y}) · {db(t.psnr)}
            </p>
          </li>
        ))}
      </ul>
    </>
  );
}

export function DecoderCostSection({ report }: { report: ReleaseReport }) {
  const d = report.decoderCost;
  return (
    <Facts
      rows={[
        ['Table', `${report.codebook.size.toLocaleString('en-GB')} codewords × ${report.codebook.dimension} components`],
        ['Firmware table', `${d.tableBytes.toLocaleString('en-GB')} bytes (${d.tableType}${d.fractionBits ? `, ${d.fractionBits} fraction bits` : ''})`],
        ['Saturated entries', String(d.saturated)],
        ['PSNR, float decoder', db(d.rounding.psnrFloat)],
        ['PSNR, fixed-point table', db(d.rounding.psnrFixed)],
        ['Rounding cost', `${d.rounding.costDb.toFixed(3)}${thin}dB (${d.rounding.differing} output values differ)`],
      ]}
    />
  );
}

/** PSNR against bit-error rate of the raw payload (measured over seeds, and the closed form's expectation). */
export function ChannelSection({ report }: { report: ReleaseReport }) {
  const { curve, note } = report.channel;
  if (!curve) return <p className="text-sm text-ink-700">{note}</p>;
  return (
    <div className="flex flex-col gap-3">
      <ChannelChart title="PSNR against bit-error rate" points={curve.points.map((p) => ({ ber: p.ber, measured: p.psnr, expected: p.expectedPsnr }))} />
      <table className="text-sm">
        <thead>
          <tr className="text-left text-ink-700">
            <th className="pr-6 font-medium">Bit-error rate</th>
            <th className="pr-6 font-medium">PSNR measured</th>
            <th className="font-medium">PSNR expected</th>
          </tr>
        </thead>
        <tbody>
          {curve.points.map((p) => (
            <tr key={p.ber}>
              <td className="pr-6 tabular-nums">{p.ber.toExponential(0)}</td>
              <td className="pr-6 tabular-nums">{db(p.psnr)}</td>
              <td className="tabular-nums">{p.expectedMse === null ? '—' : db(p.expectedPsnr)}</td>
            </tr>
          ))}
        </tbody>
      </table>
      <p className="text-sm text-ink-700">
        {curve.images} held-out images; raw payload {bpp(curve.rawBpp)}, sent through a binary symmetric channel with the header taken as received
        intact; {curve.seeds} seeds per rate.{curve.expectedNote ? ` ${curve.expectedNote}` : ''}
      </p>
    </div>
  );
}

export function ChecksumsSection({ report }: { report: ReleaseReport }) {
  return (
    <Facts
      rows={[
        ['Codewords (SHA-256)', report.checksums.codewords],
        ...report.checksums.firmwareFiles.map((f): [string, ReactNode] => [`${f.name} (${f.bytes} bytes)`, f.sha256]),
      ]}
    />
  );
}

export function SignOffSection({ report }: { report: ReleaseReport }) {
  const r = report.release;
  return (
    <>
      <Facts
        rows={[
          ['Proposed by', `${r.proposedBy?.name ?? 'A former member'} · ${formatDateTime(r.proposedAt)}`],
          ['Approved by', `${r.reviewedBy?.name ?? 'A former member'} · ${r.releasedAt ? formatDateTime(r.releasedAt) : '—'}`],
        ]}
      />
      <div className="mt-4">
        <ReviewThread thread={r.thread} />
      </div>
    </>
  );
}
