import type { TimeCursor } from './cursor.ts';

export interface MapInteraction {
  nearestT(px: number, py: number): number | null;
  cursor: TimeCursor;
  pan(dx: number, dy: number): void;
  zoom(factor: number, px: number, py: number): void;
  reset(): void;
}

/** Hover picks the nearest pose (time cursor), drag pans, wheel zooms, double-click refits. */
export function attachInteraction(el: HTMLCanvasElement, m: MapInteraction): void {
  let drag: { x: number; y: number; moved: boolean } | null = null;
  el.addEventListener('pointerdown', (ev) => {
    drag = { x: ev.offsetX, y: ev.offsetY, moved: false };
    el.setPointerCapture(ev.pointerId);
  });
  el.addEventListener('pointermove', (ev) => {
    if (drag) {
      const dx = ev.offsetX - drag.x;
      const dy = ev.offsetY - drag.y;
      if (drag.moved || Math.abs(dx) + Math.abs(dy) > 3) {
        drag = { x: ev.offsetX, y: ev.offsetY, moved: true };
        m.pan(dx, dy);
      }
      return;
    }
    m.cursor.set({ hoverT: m.nearestT(ev.offsetX, ev.offsetY) });
  });
  el.addEventListener('pointerup', (ev) => {
    if (drag && !drag.moved) {
      const t = m.nearestT(ev.offsetX, ev.offsetY);
      if (t !== null) m.cursor.set({ pinnedT: t });
    }
    drag = null;
  });
  el.addEventListener('pointerleave', () => m.cursor.set({ hoverT: null }));
  el.addEventListener(
    'wheel',
    (ev) => {
      ev.preventDefault();
      m.zoom(ev.deltaY < 0 ? 1.25 : 0.8, ev.offsetX, ev.offsetY);
    },
    { passive: false },
  );
  el.addEventListener('dblclick', () => m.reset());
}
