import type { Flag, Series } from '@plumbline/contracts';
import { fmtDuration, fmtNum } from '../format.ts';
import { drawDecimatedLine, haloText, hatchPattern, niceTicks, setupCanvas, timeTicks } from './canvas-util.ts';
import { indexAtTime, type TimeCursor } from './cursor.ts';

export interface TimePlotOptions {
  name: string;
  label: string;
  /** Extra caption text, e.g. run-wide findings that are not shaded. */
  note?: string;
  series: Series;
  /** Flags whose intervals are shaded on this plot. */
  flags: readonly Flag[];
  durationS: number;
  cursor: TimeCursor;
  height?: number;
}

const PAD = { left: 56, right: 12, top: 16, bottom: 18 };

/** Thresholds of the shaded flags that are in the series' own unit, so they can be drawn as rules on its axis. */
export function plotThresholds(series: Series, flags: readonly Flag[]): number[] {
  const out = new Set<number>();
  for (const f of flags) if (f.threshold !== null && f.unit === series.unit && series.unit !== '') out.add(f.threshold);
  return [...out].sort((a, b) => a - b);
}

/** Y-range: the finite values, sigma band and `extra` levels, padded by 8 %; a flat series gets a unit-sized window. */
export function valueRange(series: Series, extra: readonly number[] = []): [number, number] {
  let lo = Math.min(Infinity, ...extra);
  let hi = Math.max(-Infinity, ...extra);
  for (let i = 0; i < series.v.length; i++) {
    const v = series.v[i];
    if (v === null || v === undefined || !Number.isFinite(v)) continue;
    const s = series.sigma?.[i] ?? 0;
    if (v - s < lo) lo = v - s;
    if (v + s > hi) hi = v + s;
  }
  if (!Number.isFinite(lo)) return [0, 1];
  if (hi - lo < 1e-12) return [lo - 0.5, hi + 0.5];
  const pad = (hi - lo) * 0.08;
  return [lo - pad, hi + pad];
}

/**
 * A time-series plot on two stacked canvases: the base (series, sigma band, hatched flag intervals) is drawn once
 * per resize; the overlay (time cursor and read-out) redraws on every cursor move, which keeps hovering cheap.
 */
export function createTimePlot(opts: TimePlotOptions): HTMLElement {
  const wrap = document.createElement('figure');
  wrap.className = 'plot';
  wrap.dataset.series = opts.name;
  const caption = document.createElement('figcaption');
  caption.textContent = opts.series.unit ? `${opts.label} (${opts.series.unit})` : opts.label;
  if (opts.note) {
    const note = document.createElement('span');
    note.className = 'plot-note';
    note.textContent = ` · ${opts.note}`;
    caption.append(note);
  }
  const stage = document.createElement('div');
  stage.className = 'plot-stage';
  const base = document.createElement('canvas');
  const over = document.createElement('canvas');
  base.className = 'plot-base';
  over.className = 'plot-overlay';
  over.setAttribute('role', 'img');
  over.setAttribute('aria-label', `${opts.label} over run time; flagged intervals hatched`);
  stage.append(base, over);
  wrap.append(caption, stage);

  const h = opts.height ?? 110;
  let w = 600;
  const thresholds = plotThresholds(opts.series, opts.flags);
  let yr: [number, number] = valueRange(opts.series, thresholds);
  const xOf = (t: number): number => PAD.left + ((w - PAD.left - PAD.right) * t) / Math.max(opts.durationS, 1e-9);
  const tOf = (x: number): number => ((x - PAD.left) * opts.durationS) / Math.max(w - PAD.left - PAD.right, 1);
  const yOf = (v: number): number => PAD.top + (h - PAD.top - PAD.bottom) * (1 - (v - yr[0]) / (yr[1] - yr[0]));

  function drawBase(): void {
    const ctx = setupCanvas(base, w, h);
    ctx.clearRect(0, 0, w, h);
    ctx.font = '11px system-ui, sans-serif';
    drawFlags(ctx);
    drawAxes(ctx);
    drawSigma(ctx);
    ctx.strokeStyle = '#0072B2';
    ctx.lineWidth = 1.4;
    ctx.setLineDash([]);
    drawDecimatedLine(ctx, opts.series.t, opts.series.v, xOf, yOf);
    drawThresholds(ctx);
  }

  function drawThresholds(ctx: CanvasRenderingContext2D): void {
    ctx.strokeStyle = '#000';
    ctx.lineWidth = 1;
    ctx.setLineDash([2, 4]);
    ctx.textAlign = 'right';
    ctx.textBaseline = 'bottom';
    for (const th of thresholds) {
      const y = Math.round(yOf(th)) + 0.5;
      ctx.beginPath();
      ctx.moveTo(PAD.left, y);
      ctx.lineTo(w - PAD.right, y);
      ctx.stroke();
      haloText(ctx, `threshold ${fmtNum(th)} ${opts.series.unit}`, w - PAD.right - 2, y - 1);
    }
    ctx.setLineDash([]);
  }

  function drawFlags(ctx: CanvasRenderingContext2D): void {
    let labelEnd = -Infinity; // labels that would overlap the previous one are left out; the flag list has them all
    ctx.textBaseline = 'top';
    ctx.textAlign = 'left';
    for (const f of [...opts.flags].sort((a, b) => a.t_start - b.t_start)) {
      const x0 = xOf(f.t_start);
      const x1 = Math.max(xOf(f.t_end), x0 + 3);
      ctx.fillStyle = hatchPattern(ctx, f.severity);
      ctx.fillRect(x0, PAD.top, x1 - x0, h - PAD.top - PAD.bottom);
      if (x0 > labelEnd) {
        haloText(ctx, f.id, x0 + 2, 1);
        labelEnd = x0 + 2 + ctx.measureText(f.id).width + 6;
      }
    }
  }

  function drawAxes(ctx: CanvasRenderingContext2D): void {
    ctx.strokeStyle = '#c8c8c8';
    ctx.lineWidth = 1;
    ctx.fillStyle = '#444';
    ctx.textAlign = 'right';
    ctx.textBaseline = 'middle';
    for (const tick of niceTicks(yr[0], yr[1], 3)) {
      const y = Math.round(yOf(tick)) + 0.5;
      ctx.beginPath();
      ctx.moveTo(PAD.left, y);
      ctx.lineTo(w - PAD.right, y);
      ctx.stroke();
      ctx.fillText(fmtNum(tick), PAD.left - 4, y);
    }
    ctx.textAlign = 'center';
    ctx.textBaseline = 'top';
    for (const tick of timeTicks(opts.durationS, 8)) {
      const x = xOf(tick);
      ctx.textAlign = x > w - PAD.right - 20 ? 'right' : 'center';
      ctx.fillText(fmtDuration(tick), Math.min(x, w - 2), h - PAD.bottom + 3);
    }
  }

  function drawSigma(ctx: CanvasRenderingContext2D): void {
    const { t, v, sigma } = opts.series;
    if (!sigma) return;
    ctx.fillStyle = 'rgba(86,180,233,0.28)';
    ctx.beginPath();
    let open = false;
    const lower: [number, number][] = [];
    const close = (): void => {
      for (let k = lower.length - 1; k >= 0; k--) ctx.lineTo(lower[k]![0], lower[k]![1]);
      ctx.closePath();
      lower.length = 0;
      open = false;
    };
    let lastCol = Number.NaN;
    for (let i = 0; i < t.length; i++) {
      const val = v[i];
      const s = sigma[i];
      if (val === null || val === undefined || s === null || s === undefined) {
        if (open) close();
        continue;
      }
      const x = Math.round(xOf(t[i]!));
      if (x === lastCol && i !== t.length - 1) continue; // one vertex per pixel column is enough for a band
      lastCol = x;
      if (!open) ctx.moveTo(x, yOf(val + s));
      else ctx.lineTo(x, yOf(val + s));
      open = true;
      lower.push([x, yOf(val - s)]);
    }
    if (open) close();
    ctx.fill();
  }

  function drawOverlay(): void {
    const ctx = setupCanvas(over, w, h);
    ctx.clearRect(0, 0, w, h);
    const range = opts.cursor.state.range;
    if (range) {
      ctx.strokeStyle = '#000';
      ctx.lineWidth = 2;
      ctx.setLineDash([4, 2]);
      ctx.strokeRect(xOf(range.t0), PAD.top - 1, Math.max(xOf(range.t1) - xOf(range.t0), 3), h - PAD.top - PAD.bottom + 2);
      ctx.setLineDash([]);
    }
    const t = opts.cursor.current();
    if (t === null) return;
    const x = Math.round(xOf(t)) + 0.5;
    ctx.strokeStyle = '#000';
    ctx.lineWidth = 1;
    ctx.beginPath();
    ctx.moveTo(x, PAD.top);
    ctx.lineTo(x, h - PAD.bottom);
    ctx.stroke();
    const i = indexAtTime(opts.series.t, t);
    const v = i >= 0 ? opts.series.v[i] : null;
    ctx.font = '11px system-ui, sans-serif';
    ctx.textBaseline = 'top';
    ctx.textAlign = x > w - 160 ? 'right' : 'left';
    const text = `${fmtDuration(t)}  ${v === null || v === undefined ? 'no value' : `${fmtNum(v)} ${opts.series.unit}`}`;
    haloText(ctx, text, x + (ctx.textAlign === 'right' ? -4 : 4), PAD.top + 2);
    if (v !== null && v !== undefined) {
      ctx.beginPath();
      ctx.arc(x, yOf(v), 3.5, 0, 2 * Math.PI);
      ctx.stroke();
    }
  }

  function layout(): void {
    const cw = Math.floor(stage.clientWidth);
    if (cw <= 0) return;
    w = cw;
    yr = valueRange(opts.series, thresholds);
    drawBase();
    drawOverlay();
  }

  over.addEventListener('pointermove', (ev) => {
    const t = tOf(ev.offsetX);
    opts.cursor.set({ hoverT: Math.min(Math.max(t, 0), opts.durationS) });
  });
  over.addEventListener('pointerleave', () => opts.cursor.set({ hoverT: null }));
  over.addEventListener('click', (ev) => opts.cursor.set({ pinnedT: Math.min(Math.max(tOf(ev.offsetX), 0), opts.durationS) }));
  opts.cursor.subscribe(drawOverlay);
  new ResizeObserver(layout).observe(stage);
  return wrap;
}
