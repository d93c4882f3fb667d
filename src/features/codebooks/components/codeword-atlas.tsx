import { useEffect, useMemo, useRef, type KeyboardEvent, type PointerEvent } from 'react';

export type AtlasOrder = 'usage' | 'brightness' | 'index';

export type AtlasGeometry = { width: number; height: number; channels: number };

/** Mean of a codeword's components: its brightness on the 0..255 scale (for mean-removed codewords, about 0). */
export function codewordBrightness(codeword: readonly number[]): number {
  let sum = 0;
  for (const v of codeword) sum += v;
  return codeword.length === 0 ? 0 : sum / codeword.length;
}

/** Codeword indices in display order: most used first, darkest first, or as stored. Ties keep index order. */
export function atlasOrder(codewords: readonly (readonly number[])[], usage: readonly number[], order: AtlasOrder): number[] {
  const indices = codewords.map((_, i) => i);
  if (order === 'usage') return indices.sort((a, b) => (usage[b] ?? 0) - (usage[a] ?? 0) || a - b);
  if (order === 'brightness') {
    const brightness = codewords.map(codewordBrightness);
    return indices.sort((a, b) => brightness[a] - brightness[b] || a - b);
  }
  return indices;
}

const GAP = 2;
/** The accent (--color-ember-500) as RGB, for frames drawn into the canvas's pixels. */
const FRAME_RGB = [0xd8, 0x62, 0x1f] as const;

/** A one-pixel rectangle outline into RGBA pixels (in the gutter around a tile, so no codeword pixel is covered). */
function frame(px: Uint8ClampedArray, canvasWidth: number, left: number, top: number, width: number, height: number) {
  const put = (x: number, y: number) => {
    const p = (y * canvasWidth + x) * 4;
    px[p] = FRAME_RGB[0];
    px[p + 1] = FRAME_RGB[1];
    px[p + 2] = FRAME_RGB[2];
  };
  for (let x = left; x < left + width; x += 1) {
    put(x, top);
    put(x, top + height - 1);
  }
  for (let y = top; y < top + height; y += 1) {
    put(left, y);
    put(left + width - 1, y);
  }
}
/** Widest the atlas is drawn before it scrolls; tiles shrink to fit, never below one screen pixel per component. */
const MAX_WIDTH = 880;

/** Columns and tile scale: close to square, each tile at least 24 px wide where space allows. */
export function atlasLayout(count: number, geometry: AtlasGeometry) {
  const columns = Math.max(1, Math.min(count, Math.ceil(Math.sqrt(count * (geometry.height / geometry.width) * 1.6))));
  const scale = Math.max(1, Math.min(12, Math.floor((MAX_WIDTH / columns - GAP) / geometry.width)));
  const tileWidth = geometry.width * scale;
  const tileHeight = geometry.height * scale;
  const rows = Math.ceil(count / columns);
  return { columns, rows, scale, tileWidth, tileHeight, canvasWidth: columns * (tileWidth + GAP) + GAP, canvasHeight: rows * (tileHeight + GAP) + GAP };
}

/**
 * The codewords as image tiles on one canvas: each component is a pixel, scaled up by an integer factor without
 * smoothing so blocks stay blocks. Mean-removed codewords are residuals around zero and are drawn around mid-grey
 * (128), with an optional gain because residuals are often faint.
 */
export function CodewordAtlas({
  codewords,
  geometry,
  usage,
  order,
  meanRemoved,
  gain,
  selected,
  onSelect,
  marked,
  label,
}: {
  /** K × d, components ((row·width)+column)·channels+channel. */
  codewords: number[][];
  geometry: AtlasGeometry;
  usage: number[];
  order: AtlasOrder;
  meanRemoved: boolean;
  gain: number;
  selected: number | null;
  onSelect: (index: number | null) => void;
  /** Per codeword: framed in the accent colour (a tree level's leaves); absent: nothing framed. */
  marked?: readonly boolean[];
  /** What the tiles are, for the canvas's accessible name; default "codewords". */
  label?: string;
}) {
  const canvasRef = useRef<HTMLCanvasElement>(null);
  const sequence = useMemo(() => atlasOrder(codewords, usage, order), [codewords, usage, order]);
  const layout = atlasLayout(codewords.length, geometry);

  useEffect(() => {
    const canvas = canvasRef.current;
    const context = canvas?.getContext('2d');
    if (!canvas || !context) return;
    const { canvasWidth, canvasHeight, columns, scale, tileWidth, tileHeight } = layout;
    const image = context.createImageData(canvasWidth, canvasHeight);
    const px = image.data;
    // Gutters in the page's paper tone, so tiles read as separate blocks.
    for (let i = 0; i < px.length; i += 4) {
      px[i] = 230;
      px[i + 1] = 234;
      px[i + 2] = 236;
      px[i + 3] = 255;
    }
    const { width, height, channels } = geometry;
    const offset = meanRemoved ? 128 : 0;
    const g = meanRemoved ? gain : 1;
    sequence.forEach((index, slot) => {
      const codeword = codewords[index];
      const left = GAP + (slot % columns) * (tileWidth + GAP);
      const top = GAP + Math.floor(slot / columns) * (tileHeight + GAP);
      if (marked?.[index]) frame(px, canvasWidth, left - 1, top - 1, tileWidth + 2, tileHeight + 2);
      for (let row = 0; row < height; row += 1) {
        for (let col = 0; col < width; col += 1) {
          const base = (row * width + col) * channels;
          const r = offset + g * codeword[base];
          const gr = channels === 3 ? offset + g * codeword[base + 1] : r;
          const b = channels === 3 ? offset + g * codeword[base + 2] : r;
          for (let dy = 0; dy < scale; dy += 1) {
            let p = ((top + row * scale + dy) * canvasWidth + left + col * scale) * 4;
            for (let dx = 0; dx < scale; dx += 1, p += 4) {
              // Uint8ClampedArray clamps to 0..255 and rounds, as the PNG writer does.
              px[p] = r;
              px[p + 1] = gr;
              px[p + 2] = b;
            }
          }
        }
      }
    });
    context.putImageData(image, 0, 0);
  }, [codewords, geometry, sequence, layout, meanRemoved, gain, marked]);

  const slotOf = (index: number) => sequence.indexOf(index);
  const selectedSlot = selected === null ? -1 : slotOf(selected);

  const onPointer = (event: PointerEvent<HTMLCanvasElement>) => {
    const box = event.currentTarget.getBoundingClientRect();
    const sx = ((event.clientX - box.left) / box.width) * layout.canvasWidth;
    const sy = ((event.clientY - box.top) / box.height) * layout.canvasHeight;
    const col = Math.floor((sx - GAP / 2) / (layout.tileWidth + GAP));
    const row = Math.floor((sy - GAP / 2) / (layout.tileHeight + GAP));
    const slot = row * layout.columns + col;
    if (col >= 0 && col < layout.columns && slot >= 0 && slot < sequence.length) onSelect(sequence[slot]);
  };

  const onKey = (event: KeyboardEvent<HTMLCanvasElement>) => {
    const moves: Record<string, number> = { ArrowRight: 1, ArrowLeft: -1, ArrowDown: layout.columns, ArrowUp: -layout.columns, Home: -Infinity, End: Infinity };
    const move = moves[event.key];
    if (move === undefined) {
      if (event.key === 'Escape') onSelect(null);
      return;
    }
    event.preventDefault();
    const from = selectedSlot < 0 ? 0 : selectedSlot;
    const next = Math.min(sequence.length - 1, Math.max(0, move === Infinity ? sequence.length - 1 : move === -Infinity ? 0 : from + (selectedSlot < 0 ? 0 : move)));
    onSelect(sequence[next]);
  };

  const ring =
    selectedSlot >= 0
      ? {
          left: `${((GAP + (selectedSlot % layout.columns) * (layout.tileWidth + GAP) - 2) / layout.canvasWidth) * 100}%`,
          top: `${((GAP + Math.floor(selectedSlot / layout.columns) * (layout.tileHeight + GAP) - 2) / layout.canvasHeight) * 100}%`,
          width: `${((layout.tileWidth + 4) / layout.canvasWidth) * 100}%`,
          height: `${((layout.tileHeight + 4) / layout.canvasHeight) * 100}%`,
        }
      : null;

  return (
    <div className="relative inline-block max-w-full">
      <canvas
        ref={canvasRef}
        width={layout.canvasWidth}
        height={layout.canvasHeight}
        tabIndex={0}
        role="img"
        aria-label={`Atlas of ${codewords.length} ${label ?? 'codewords'}, ${geometry.width}×${geometry.height} pixels each, ordered by ${order}${marked?.some(Boolean) ? ', leaves framed' : ''}. Arrow keys move the selection.`}
        data-testid="codeword-atlas"
        onPointerDown={onPointer}
        onKeyDown={onKey}
        className="block h-auto max-w-full cursor-crosshair rounded-sm border border-ink-200"
        style={{ imageRendering: 'pixelated', width: layout.canvasWidth }}
      />
      {ring && <div aria-hidden="true" className="pointer-events-none absolute rounded-[2px] ring-2 ring-ember-500" style={ring} />}
    </div>
  );
}
