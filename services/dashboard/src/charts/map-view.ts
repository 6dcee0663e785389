import type { Loop, Path, Report } from '@plumbline/contracts';
import { SEVERITY_STYLE, fmtDuration } from '../format.ts';
import { haloText, setupCanvas, severityDash } from './canvas-util.ts';
import { indexAtTime, type TimeCursor } from './cursor.ts';
import { attachInteraction } from './map-interaction.ts';
import { alignForDisplay, mapStretches, pathBounds, transformPath, type Stretch } from './map-data.ts';

/** Screen box of a placed label: x0, y0, x1, y1 in CSS px. */
type Box = [number, number, number, number];

/** World-to-screen transform: uniform scale (maps must not be stretched), y up. */
interface View {
  cx: number;
  cy: number;
  pxPerM: number;
}

/**
 * Top-down map of a run on canvas: odometry path, repaired overlay, GNSS fixes, loop links, flagged stretches
 * (dash pattern per severity plus an id label), and the shared time cursor on an overlay canvas.
 */
export function createMapView(report: Report, cursor: TimeCursor, height = 420): HTMLElement {
  const traj = report.series.trajectory;
  const repaired = report.series.repaired_trajectory;
  const gnss = displayGnss(report);
  const stage = document.createElement('div');
  stage.className = 'map-stage';
  const base = document.createElement('canvas');
  const over = document.createElement('canvas');
  base.className = 'map-base';
  over.className = 'map-overlay';
  over.setAttribute('role', 'img');
  over.setAttribute('aria-label', 'Top-down map of the run with flagged stretches and loop closures');
  stage.append(base, over);

  let w = 800;
  const h = height;
  const fitView = (): View => {
    const [x0, y0, x1, y1] = pathBounds([traj, repaired, gnss]);
    const pxPerM = Math.min((w - 40) / Math.max(x1 - x0, 1e-6), (h - 40) / Math.max(y1 - y0, 1e-6));
    return { cx: (x0 + x1) / 2, cy: (y0 + y1) / 2, pxPerM };
  };
  let view: View = fitView();
  const sx = (x: number): number => w / 2 + (x - view.cx) * view.pxPerM;
  const sy = (y: number): number => h / 2 - (y - view.cy) * view.pxPerM;

  function strokePath(ctx: CanvasRenderingContext2D, p: Path, i0 = 0, i1 = p.x.length - 1): void {
    ctx.beginPath();
    let lx = Number.NaN;
    let ly = Number.NaN;
    for (let i = i0; i <= i1; i++) {
      const x = sx(p.x[i]!);
      const y = sy(p.y[i]!);
      if (i === i0) ctx.moveTo(x, y);
      else if (Math.abs(x - lx) + Math.abs(y - ly) >= 0.75) ctx.lineTo(x, y); // skip sub-pixel steps
      else continue;
      lx = x;
      ly = y;
    }
    ctx.stroke();
  }

  function drawLoops(ctx: CanvasRenderingContext2D, loops: readonly Loop[], placed: Box[]): void {
    for (const loop of loops) {
      const a = indexAtTime(traj.t, loop.t_a);
      const b = indexAtTime(traj.t, loop.t_b);
      if (a < 0 || b < 0) continue;
      const ax = sx(traj.x[a]!);
      const ay = sy(traj.y[a]!);
      const bx = sx(traj.x[b]!);
      const by = sy(traj.y[b]!);
      ctx.lineWidth = loop.accepted ? 1.2 : 2;
      ctx.strokeStyle = loop.accepted ? '#009E73' : '#CC79A7';
      ctx.setLineDash(loop.accepted ? [] : [6, 4]);
      ctx.beginPath();
      ctx.moveTo(ax, ay);
      ctx.lineTo(bx, by);
      ctx.stroke();
      ctx.setLineDash([]);
      if (!loop.accepted) {
        const mx = (ax + bx) / 2;
        const my = (ay + by) / 2;
        ctx.lineWidth = 2.5;
        ctx.beginPath();
        ctx.moveTo(mx - 6, my - 6);
        ctx.lineTo(mx + 6, my + 6);
        ctx.moveTo(mx + 6, my - 6);
        ctx.lineTo(mx - 6, my + 6);
        ctx.stroke();
        ctx.font = 'bold 12px system-ui, "DejaVu Sans", sans-serif';
        ctx.textAlign = 'left';
        ctx.textBaseline = 'bottom';
        placeLabel(ctx, placed, `✕ rejected ${loop.id}`, mx + 9, my + 5, '#7a2a5a');
      }
    }
  }

  function drawStretches(ctx: CanvasRenderingContext2D, stretches: readonly Stretch[], placed: Box[]): void {
    for (const st of stretches) {
      const i0 = indexAtTime(traj.t, st.t_start);
      const i1 = Math.min(Math.max(indexAtTime(traj.t, st.t_end), i0 + 1), traj.x.length - 1);
      if (i0 < 0) continue;
      const style = SEVERITY_STYLE[st.severity];
      ctx.lineCap = 'butt';
      ctx.lineWidth = 9;
      ctx.strokeStyle = 'rgba(255,255,255,0.85)';
      ctx.setLineDash([]);
      strokePath(ctx, traj, i0, i1);
      ctx.lineWidth = 6;
      ctx.strokeStyle = style.colour;
      ctx.setLineDash(severityDash(st.severity));
      strokePath(ctx, traj, i0, i1);
      ctx.setLineDash([]);
      const mid = Math.round((i0 + i1) / 2);
      const mx = sx(traj.x[mid]!);
      const my = sy(traj.y[mid]!);
      ctx.strokeStyle = '#000';
      ctx.lineWidth = 1.5;
      ctx.beginPath();
      ctx.arc(mx, my, 4, 0, 2 * Math.PI); // anchor for the label, visible even for a one-sample stretch
      ctx.stroke();
      ctx.font = 'bold 12px system-ui, "DejaVu Sans", sans-serif';
      ctx.textAlign = 'left';
      ctx.textBaseline = 'bottom';
      placeLabel(ctx, placed, `${style.glyph} ${st.label}`, mx + 8, my - 6);
    }
  }

  /** Draw a label at the first of a few offsets where it overlaps no earlier label; leave it out otherwise. */
  function placeLabel(ctx: CanvasRenderingContext2D, placed: Box[], text: string, x: number, y: number, colour?: string): void {
    const tw = ctx.measureText(text).width;
    if (x + tw > w - 4) x = Math.max(4, x - 16 - tw); // flip to the left of the anchor near the right edge
    for (const dy of [0, 16, -16, 32, -32]) {
      const box: Box = [x, y + dy - 14, x + tw, y + dy];
      if (placed.some((b) => box[0] < b[2] && box[2] > b[0] && box[1] < b[3] && box[3] > b[1])) continue;
      placed.push(box);
      haloText(ctx, text, x, y + dy, colour);
      return;
    }
  }

  function drawGnss(ctx: CanvasRenderingContext2D): void {
    if (!gnss) return;
    ctx.lineWidth = 1;
    ctx.strokeStyle = '#56B4E9';
    ctx.fillStyle = '#56B4E9';
    for (let i = 0; i < gnss.x.length; i++) {
      const x = sx(gnss.x[i]!);
      const y = sy(gnss.y[i]!);
      // Filled square: RTK fixed (GGA quality 4); hollow circle: any weaker fix.
      if (gnss.fix[i] === 4) ctx.fillRect(x - 1.5, y - 1.5, 3, 3);
      else {
        ctx.beginPath();
        ctx.arc(x, y, 2.5, 0, 2 * Math.PI);
        ctx.stroke();
      }
    }
  }

  function drawScaleBar(ctx: CanvasRenderingContext2D): void {
    const target = 120 / view.pxPerM;
    const mag = 10 ** Math.floor(Math.log10(target));
    const m = [1, 2, 5, 10].map((k) => k * mag).filter((v) => v <= target).pop() ?? mag;
    const len = m * view.pxPerM;
    ctx.strokeStyle = '#222';
    ctx.lineWidth = 2;
    ctx.beginPath();
    ctx.moveTo(12, h - 14);
    ctx.lineTo(12 + len, h - 14);
    ctx.moveTo(12, h - 19);
    ctx.lineTo(12, h - 9);
    ctx.moveTo(12 + len, h - 19);
    ctx.lineTo(12 + len, h - 9);
    ctx.stroke();
    ctx.font = '11px system-ui, "DejaVu Sans", sans-serif';
    ctx.textAlign = 'left';
    ctx.textBaseline = 'bottom';
    haloText(ctx, `${m} m`, 16, h - 17);
  }

  function drawBase(): void {
    const ctx = setupCanvas(base, w, h);
    ctx.fillStyle = '#fbfaf7';
    ctx.fillRect(0, 0, w, h);
    ctx.lineJoin = 'round';
    drawGnss(ctx);
    if (repaired) {
      ctx.strokeStyle = '#7d7d7d';
      ctx.lineWidth = 1.5;
      ctx.setLineDash([5, 3]);
      strokePath(ctx, repaired);
      ctx.setLineDash([]);
    }
    ctx.strokeStyle = '#1b1b1b';
    ctx.lineWidth = 1.6;
    strokePath(ctx, traj);
    const placed: Box[] = []; // label boxes, so later labels move aside instead of overprinting
    drawLoops(ctx, report.loops, placed);
    drawStretches(ctx, mapStretches(report), placed);
    if (traj.x.length > 0) {
      ctx.font = '12px system-ui, "DejaVu Sans", sans-serif';
      ctx.textAlign = 'left';
      ctx.textBaseline = 'top';
      haloText(ctx, '▶ start', sx(traj.x[0]!) + 6, sy(traj.y[0]!) + 4);
      const n = traj.x.length - 1;
      haloText(ctx, '■ end', sx(traj.x[n]!) + 6, sy(traj.y[n]!) + 18);
    }
    drawScaleBar(ctx);
  }

  function drawOverlay(): void {
    const ctx = setupCanvas(over, w, h);
    ctx.clearRect(0, 0, w, h);
    const range = cursor.state.range;
    if (range) {
      const i0 = indexAtTime(traj.t, range.t0);
      const i1 = indexAtTime(traj.t, range.t1);
      if (i0 >= 0) {
        ctx.strokeStyle = 'rgba(0,0,0,0.55)';
        ctx.lineWidth = 12;
        ctx.lineCap = 'round';
        strokePath(ctx, traj, i0, Math.max(i1, i0));
      }
    }
    const t = cursor.current();
    if (t === null || traj.t.length === 0) return;
    const i = indexAtTime(traj.t, t);
    const x = sx(traj.x[i]!);
    const y = sy(traj.y[i]!);
    ctx.lineWidth = 2.5;
    ctx.strokeStyle = '#000';
    ctx.fillStyle = '#F0E442';
    ctx.beginPath();
    ctx.arc(x, y, 7, 0, 2 * Math.PI);
    ctx.fill();
    ctx.stroke();
    ctx.font = 'bold 12px system-ui, "DejaVu Sans", sans-serif';
    ctx.textAlign = 'left';
    ctx.textBaseline = 'middle';
    haloText(ctx, fmtDuration(t), x + 11, y);
  }

  function layout(): void {
    const cw = Math.floor(stage.clientWidth);
    if (cw <= 0) return;
    const refit = w !== cw;
    w = cw;
    if (refit) view = fitView();
    drawBase();
    drawOverlay();
  }

  attachInteraction(over, {
    nearestT(px, py) {
      let best = -1;
      let bestD = 15 * 15; // pick radius, px²
      for (let i = 0; i < traj.x.length; i++) {
        const dx = sx(traj.x[i]!) - px;
        const dy = sy(traj.y[i]!) - py;
        const d = dx * dx + dy * dy;
        if (d < bestD) {
          bestD = d;
          best = i;
        }
      }
      return best >= 0 ? traj.t[best]! : null;
    },
    cursor,
    pan(dx, dy) {
      view = { ...view, cx: view.cx - dx / view.pxPerM, cy: view.cy + dy / view.pxPerM };
      drawBase();
      drawOverlay();
    },
    zoom(factor, px, py) {
      const wx = view.cx + (px - w / 2) / view.pxPerM;
      const wy = view.cy - (py - h / 2) / view.pxPerM;
      const pxPerM = view.pxPerM * factor;
      view = { pxPerM, cx: wx - (px - w / 2) / pxPerM, cy: wy + (py - h / 2) / pxPerM };
      drawBase();
      drawOverlay();
    },
    reset() {
      view = fitView();
      drawBase();
      drawOverlay();
    },
  });
  cursor.subscribe(drawOverlay);
  new ResizeObserver(layout).observe(stage);
  return stage;
}

/** GNSS fixes in the path's frame: as given when the frames match, else rigidly aligned for display (or none). */
export function displayGnss(report: Report): (Path & { fix: number[] }) | null {
  const g = report.series.gnss_fixes;
  const traj = report.series.trajectory;
  if (!g || g.frame === traj.frame) return g;
  const r = alignForDisplay(g, traj);
  return r ? transformPath(g, r) : null;
}
