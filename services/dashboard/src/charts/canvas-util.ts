import type { Severity } from '@plumbline/contracts';
import { SEVERITY_STYLE } from '../format.ts';

/** Size a canvas for the device pixel ratio and return a context scaled to CSS pixels. */
export function setupCanvas(canvas: HTMLCanvasElement, cssW: number, cssH: number): CanvasRenderingContext2D {
  const dpr = window.devicePixelRatio || 1;
  canvas.width = Math.max(1, Math.round(cssW * dpr));
  canvas.height = Math.max(1, Math.round(cssH * dpr));
  canvas.style.width = `${cssW}px`;
  canvas.style.height = `${cssH}px`;
  const ctx = canvas.getContext('2d');
  if (!ctx) throw new Error('2-D canvas is not available in this browser');
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  return ctx;
}

const patternCache = new Map<string, CanvasPattern | null>();

/**
 * Hatching per severity so shaded intervals read without colour: info = sparse single diagonal,
 * warn = dense single diagonal, critical = cross-hatch.
 */
export function hatchPattern(ctx: CanvasRenderingContext2D, severity: Severity): CanvasPattern | string {
  const key = severity;
  if (!patternCache.has(key)) {
    const size = severity === 'info' ? 12 : 8;
    const tile = document.createElement('canvas');
    tile.width = size;
    tile.height = size;
    const t = tile.getContext('2d');
    if (t) {
      t.strokeStyle = SEVERITY_STYLE[severity].colour;
      t.globalAlpha = 0.55;
      t.lineWidth = 1.5;
      t.beginPath();
      t.moveTo(0, size);
      t.lineTo(size, 0);
      if (severity === 'critical') {
        t.moveTo(0, 0);
        t.lineTo(size, size);
      }
      t.stroke();
    }
    patternCache.set(key, ctx.createPattern(tile, 'repeat'));
  }
  return patternCache.get(key) ?? `${SEVERITY_STYLE[severity].colour}40`;
}

/** Line dash per severity for flagged stretches on the map. */
export function severityDash(severity: Severity): number[] {
  return severity === 'critical' ? [2, 3] : severity === 'warn' ? [8, 4] : [14, 4, 2, 4];
}

/**
 * Draw `v(t)` as a polyline with min/max decimation per pixel column: O(n) in the points, O(width) in path
 * segments, so an 8-hour series at full resolution still draws in one cheap pass. Null values break the line.
 */
export function drawDecimatedLine(
  ctx: CanvasRenderingContext2D,
  t: readonly number[],
  v: readonly (number | null)[],
  xOf: (t: number) => number,
  yOf: (v: number) => number,
): void {
  ctx.beginPath();
  let col = Number.NaN;
  let lo = 0;
  let hi = 0;
  let first = 0;
  let last = 0;
  let open = false;
  const flush = (): void => {
    if (Number.isNaN(col)) return;
    if (!open) {
      ctx.moveTo(col, yOf(first));
      open = true;
    } else {
      ctx.lineTo(col, yOf(first));
    }
    if (lo !== hi) {
      ctx.lineTo(col, yOf(lo));
      ctx.lineTo(col, yOf(hi));
    }
    ctx.lineTo(col, yOf(last));
  };
  for (let i = 0; i < t.length; i++) {
    const val = v[i];
    if (val === null || val === undefined || !Number.isFinite(val)) {
      flush();
      col = Number.NaN;
      open = false;
      continue;
    }
    const c = Math.round(xOf(t[i]!));
    if (c !== col) {
      flush();
      col = c;
      lo = hi = first = last = val;
    } else {
      if (val < lo) lo = val;
      if (val > hi) hi = val;
      last = val;
    }
  }
  flush();
  ctx.stroke();
}

/** Round axis ticks ("nice numbers", Heckbert, Graphics Gems 1990). */
export function niceTicks(min: number, max: number, count: number): number[] {
  if (!(max > min)) return [min];
  const raw = (max - min) / Math.max(1, count);
  const mag = 10 ** Math.floor(Math.log10(raw));
  const norm = raw / mag;
  const step = (norm < 1.5 ? 1 : norm < 3 ? 2 : norm < 7 ? 5 : 10) * mag;
  const out: number[] = [];
  for (let x = Math.ceil(min / step) * step; x <= max + step * 1e-9; x += step) out.push(Number(x.toPrecision(12)));
  return out;
}

const TIME_STEPS_S = [1, 2, 5, 10, 15, 30, 60, 120, 300, 600, 900, 1200, 1800, 3600, 7200, 10800, 14400];

/** Ticks on a run-time axis at whole clock steps (1 s … 4 h) so labels read as h:mm:ss without odd minutes. */
export function timeTicks(durationS: number, count: number): number[] {
  const raw = durationS / Math.max(1, count);
  const step = TIME_STEPS_S.find((s) => s >= raw) ?? Math.ceil(raw / 3600) * 3600;
  const out: number[] = [];
  for (let t = 0; t <= durationS + 1e-9; t += step) out.push(t);
  return out;
}

/** Label with a light halo so it stays legible over lines and hatching. */
export function haloText(ctx: CanvasRenderingContext2D, text: string, x: number, y: number, colour = '#1b1b1b'): void {
  ctx.lineWidth = 3;
  ctx.strokeStyle = 'rgba(255,255,255,0.9)';
  ctx.strokeText(text, x, y);
  ctx.fillStyle = colour;
  ctx.fillText(text, x, y);
}
