import { useEffect, useLayoutEffect, useRef, useState, type KeyboardEvent, type PointerEvent } from 'react';
import { Button } from '../../../components/ui/button';
import { reconstructionImageUrl } from '../api/get-reconstruction';

type View = { zoom: number; x: number; y: number };

const views = [
  { view: 'original', label: 'Original' },
  { view: 'reconstruction', label: 'Reconstruction' },
  { view: 'error', label: 'Error map' },
] as const;

const MAX_ZOOM = 32;
const PANE_HEIGHT = 260;

/**
 * Original, reconstruction and error map side by side, sharing one zoom and pan so the same pixels are always in
 * view in all three. Zoom with the wheel or the buttons (about the pointer or the centre), pan by dragging or with the
 * arrow keys; pixels are never smoothed, because smoothing would hide exactly the block edges being inspected.
 */
export function ReconstructionViewer({ teamId, codebookId, image }: { teamId: number; codebookId: number; image: { imageId: number; width: number; height: number; fileName: string } }) {
  const paneRef = useRef<HTMLDivElement>(null);
  const [paneWidth, setPaneWidth] = useState(300);
  const fit = Math.min(paneWidth / image.width, PANE_HEIGHT / image.height);
  const [view, setView] = useState<View | null>(null);
  const drag = useRef<{ x: number; y: number; startX: number; startY: number } | null>(null);
  const current: View = view ?? { zoom: fit, x: (paneWidth - image.width * fit) / 2, y: (PANE_HEIGHT - image.height * fit) / 2 };

  useLayoutEffect(() => {
    const pane = paneRef.current;
    if (!pane || typeof ResizeObserver === 'undefined') return;
    const observer = new ResizeObserver((entries) => setPaneWidth(Math.max(120, Math.floor(entries[0]?.contentRect.width ?? 300))));
    observer.observe(pane);
    return () => observer.disconnect();
  }, []);

  // Back to "fit" whenever another image is shown.
  useLayoutEffect(() => setView(null), [image.imageId]);

  const zoomAbout = (factor: number, cx: number, cy: number) => {
    const zoom = Math.min(MAX_ZOOM, Math.max(fit / 2, current.zoom * factor));
    const k = zoom / current.zoom;
    setView({ zoom, x: cx - (cx - current.x) * k, y: cy - (cy - current.y) * k });
  };

  const zoomRef = useRef(zoomAbout);
  zoomRef.current = zoomAbout;
  const gridRef = useRef<HTMLDivElement>(null);
  // React registers wheel listeners as passive, which cannot stop the page from scrolling; this one is not.
  useEffect(() => {
    const grid = gridRef.current;
    if (!grid) return;
    const onWheel = (event: WheelEvent) => {
      const pane = (event.target as Element | null)?.closest('[data-pane]');
      if (!pane) return;
      event.preventDefault();
      const box = pane.getBoundingClientRect();
      zoomRef.current(event.deltaY < 0 ? 1.25 : 0.8, event.clientX - box.left, event.clientY - box.top);
    };
    grid.addEventListener('wheel', onWheel, { passive: false });
    return () => grid.removeEventListener('wheel', onWheel);
  }, []);

  const onPointerDown = (event: PointerEvent<HTMLDivElement>) => {
    event.currentTarget.setPointerCapture(event.pointerId);
    drag.current = { x: event.clientX, y: event.clientY, startX: current.x, startY: current.y };
  };
  const onPointerMove = (event: PointerEvent<HTMLDivElement>) => {
    const d = drag.current;
    if (!d) return;
    setView({ zoom: current.zoom, x: d.startX + event.clientX - d.x, y: d.startY + event.clientY - d.y });
  };
  const onPointerUp = () => {
    drag.current = null;
  };

  const onKey = (event: KeyboardEvent<HTMLDivElement>) => {
    const step = 40;
    const moves: Record<string, [number, number]> = { ArrowLeft: [step, 0], ArrowRight: [-step, 0], ArrowUp: [0, step], ArrowDown: [0, -step] };
    if (moves[event.key]) {
      event.preventDefault();
      const [dx, dy] = moves[event.key];
      setView({ ...current, x: current.x + dx, y: current.y + dy });
    } else if (event.key === '+' || event.key === '=') zoomAbout(1.25, paneWidth / 2, PANE_HEIGHT / 2);
    else if (event.key === '-') zoomAbout(0.8, paneWidth / 2, PANE_HEIGHT / 2);
    else if (event.key === '0') setView(null);
  };

  return (
    <div className="flex flex-col gap-3">
      <div className="flex flex-wrap items-center gap-2" role="toolbar" aria-label="Zoom">
        <Button variant="secondary" size="sm" onClick={() => zoomAbout(0.8, paneWidth / 2, PANE_HEIGHT / 2)} aria-label="Zoom out">
          −
        </Button>
        <span className="num w-16 text-center text-sm text-ink-800" aria-live="polite">
          {Math.round(current.zoom * 100)} %
        </span>
        <Button variant="secondary" size="sm" onClick={() => zoomAbout(1.25, paneWidth / 2, PANE_HEIGHT / 2)} aria-label="Zoom in">
          +
        </Button>
        <Button variant="ghost" size="sm" onClick={() => setView(null)}>
          Fit
        </Button>
        <Button variant="ghost" size="sm" onClick={() => zoomAbout(1 / current.zoom, paneWidth / 2, PANE_HEIGHT / 2)}>
          1:1
        </Button>
        <span className="text-xs text-ink-600">Wheel to zoom, drag or arrow keys to pan — all three views move together.</span>
      </div>
      <div ref={gridRef} className="grid gap-3 md:grid-cols-3">
        {views.map(({ view: name, label }, i) => (
          <figure key={name} className="flex min-w-0 flex-col gap-1.5">
            <div
              ref={i === 0 ? paneRef : undefined}
              tabIndex={0}
              role="group"
              aria-label={`${label} of ${image.fileName}; arrow keys pan, plus and minus zoom, 0 fits`}
              className="relative cursor-grab touch-none overflow-hidden rounded-md border border-ink-200 bg-[repeating-conic-gradient(var(--color-ink-100)_0_25%,var(--color-surface)_0_50%)] bg-[length:16px_16px] active:cursor-grabbing"
              style={{ height: PANE_HEIGHT }}
              data-pane={name}
              onPointerDown={onPointerDown}
              onPointerMove={onPointerMove}
              onPointerUp={onPointerUp}
              onPointerCancel={onPointerUp}
              onKeyDown={onKey}
            >
              <img
                src={reconstructionImageUrl(teamId, codebookId, image.imageId, name)}
                alt={`${label} of ${image.fileName}`}
                width={image.width}
                height={image.height}
                draggable={false}
                className="absolute top-0 left-0 max-w-none origin-top-left select-none"
                style={{ imageRendering: 'pixelated', transform: `translate(${current.x}px, ${current.y}px) scale(${current.zoom})` }}
              />
            </div>
            <figcaption className="text-sm font-medium text-ink-800">{label}</figcaption>
          </figure>
        ))}
      </div>
    </div>
  );
}
