/**
 * Series styling shared by every chart. Colours and dashes are the design tokens of src/styles/app.css
 * (--color-series-N, --series-dash-N); the dash values are repeated here because SVG presentation attributes
 * must carry them literally for print and export, and a client test keeps the two in step.
 */
export const seriesDashes = ['none', '8 4', '3 3', '8 3 2 3', '1.5 3', '12 3 2 3 2 3', '5 2'] as const;

export const SERIES_COUNT = seriesDashes.length;

export type SeriesStyle = { index: number; color: string; dash: string };

/** Style number `n` (1-based, as the tokens are numbered); numbers beyond the set wrap round. */
export function seriesStyle(n: number): SeriesStyle {
  const index = ((((n - 1) % SERIES_COUNT) + SERIES_COUNT) % SERIES_COUNT) + 1;
  return { index, color: `var(--color-series-${index})`, dash: seriesDashes[index - 1] };
}

/** Reference codecs share the ink colour and are told apart by markers and dash, so VQ curves keep the hues. */
export const referenceStyles: Record<'jpeg' | 'webp' | 'avif', { color: string; dash: string; marker: 'square' | 'diamond' | 'triangle' }> = {
  jpeg: { color: 'var(--color-series-7)', dash: seriesDashes[6], marker: 'square' },
  webp: { color: 'var(--color-ink-500)', dash: '2 2', marker: 'diamond' },
  avif: { color: 'var(--color-ink-400)', dash: '6 2 1 2', marker: 'triangle' },
};
