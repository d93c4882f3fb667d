import { useLayoutEffect, useRef, useState } from 'react';

/**
 * Width of the element the chart sits in, so the SVG is drawn at its real pixel size (crisp 1.5 px strokes, text that
 * is never scaled). Where ResizeObserver is missing (jsdom) the fallback width stands.
 */
export function useChartWidth<T extends HTMLElement>(fallback: number) {
  const ref = useRef<T>(null);
  const [width, setWidth] = useState(fallback);
  useLayoutEffect(() => {
    const element = ref.current;
    if (!element || typeof ResizeObserver === 'undefined') return;
    const observer = new ResizeObserver((entries) => {
      const next = Math.floor(entries[0]?.contentRect.width ?? 0);
      if (next > 0) setWidth(next);
    });
    observer.observe(element);
    return () => observer.disconnect();
  }, []);
  return { ref, width };
}
