/**
 * The explorer's linked x-y view: a binned density of every loaded row (grey) with the current
 * selection on top (coloured cells, or points when few), drawn on a canvas so its cost does not
 * grow with the catalogue. Dragging a box sets range filters on both columns (which filter the
 * table); any filter of the table redraws the selection here. Clicking a point opens its page.
 */

export interface PlotData {
  n: number;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  /** Rows of the current selection. */
  selection: Uint32Array;
  /** Current range filters on the two columns, if any. */
  xRange: [number, number] | null;
  yRange: [number, number] | null;
  xLabel: string;
  yLabel: string;
}

export interface PlotHandlers {
  onBrush(x: [number, number], y: [number, number]): void;
  onOpen(row: number): void;
  describe(row: number): string;
}

const W = 560, H = 360, L = 56, R = 12, T = 12, B = 40, NX = 70, NY = 45, POINTS_BELOW = 4000;

function extent(v: ArrayLike<number>, n: number): [number, number] {
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i < n; i++) {
    const x = v[i];
    if (Number.isFinite(x)) {
      if (x < lo) lo = x;
      if (x > hi) hi = x;
    }
  }
  if (!(hi > lo)) return [lo - 1 || -1, hi + 1 || 1];
  const pad = (hi - lo) * 0.03;
  return [lo - pad, hi + pad];
}

function ticks(lo: number, hi: number, n = 6): number[] {
  const step0 = (hi - lo) / n;
  const p = 10 ** Math.floor(Math.log10(step0));
  const step = [1, 2, 5, 10].map((m) => m * p).find((s) => s >= step0) ?? step0;
  const out: number[] = [];
  for (let t = Math.ceil(lo / step) * step; t <= hi; t += step) out.push(Number(t.toPrecision(10)));
  return out;
}

export function createPlot(canvas: HTMLCanvasElement, tip: HTMLElement, h: PlotHandlers): (d: PlotData) => void {
  const dpr = Math.max(1, Math.min(2, window.devicePixelRatio || 1));
  canvas.width = W * dpr;
  canvas.height = H * dpr;
  const ctx = canvas.getContext('2d')!;
  let data: PlotData | null = null;
  let xr: [number, number] = [0, 1], yr: [number, number] = [0, 1];
  const px = (x: number) => L + ((x - xr[0]) / (xr[1] - xr[0])) * (W - L - R);
  const py = (y: number) => H - B - ((y - yr[0]) / (yr[1] - yr[0])) * (H - T - B);
  const ix = (p: number) => xr[0] + ((p - L) / (W - L - R)) * (xr[1] - xr[0]);
  const iy = (p: number) => yr[0] + ((H - B - p) / (H - T - B)) * (yr[1] - yr[0]);
  const css = (name: string, fallback: string) => getComputedStyle(canvas).getPropertyValue(name).trim() || fallback;

  function draw(drag?: { x0: number; y0: number; x1: number; y1: number }): void {
    if (!data) return;
    const d = data;
    ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
    ctx.clearRect(0, 0, W, H);
    const fg = css('color', '#222');
    const accent = '#0072B2'; // Okabe & Ito (2008) blue
    ctx.font = '12px system-ui, sans-serif';
    ctx.fillStyle = fg;
    ctx.strokeStyle = fg;
    // all rows, binned
    const all = new Uint32Array(NX * NY), sel = new Uint32Array(NX * NY);
    const cell = (x: number, y: number) => {
      const cx = Math.floor(((x - xr[0]) / (xr[1] - xr[0])) * NX), cy = Math.floor(((y - yr[0]) / (yr[1] - yr[0])) * NY);
      return cx >= 0 && cx < NX && cy >= 0 && cy < NY ? cy * NX + cx : -1;
    };
    for (let i = 0; i < d.n; i++) {
      const c = cell(d.x[i], d.y[i]);
      if (c >= 0) all[c]++;
    }
    const showPoints = d.selection.length <= POINTS_BELOW;
    if (!showPoints) for (const r of d.selection) {
      const c = cell(d.x[r], d.y[r]);
      if (c >= 0) sel[c]++;
    }
    let maxAll = 1, maxSel = 1;
    for (let c = 0; c < all.length; c++) {
      if (all[c] > maxAll) maxAll = all[c];
      if (sel[c] > maxSel) maxSel = sel[c];
    }
    const cw = (W - L - R) / NX, ch = (H - T - B) / NY;
    for (let c = 0; c < all.length; c++) {
      if (!all[c]) continue;
      const a = 0.12 + 0.45 * Math.sqrt(all[c] / maxAll);
      ctx.fillStyle = `rgba(128,128,128,${a.toFixed(3)})`;
      ctx.fillRect(L + (c % NX) * cw, T + (NY - 1 - Math.floor(c / NX)) * ch, cw + 0.5, ch + 0.5);
    }
    ctx.fillStyle = accent;
    if (showPoints) {
      for (const r of d.selection) {
        const x = d.x[r], y = d.y[r];
        if (!Number.isFinite(x) || !Number.isFinite(y)) continue;
        ctx.fillRect(px(x) - 1.5, py(y) - 1.5, 3, 3);
      }
    } else {
      for (let c = 0; c < sel.length; c++) {
        if (!sel[c]) continue;
        ctx.globalAlpha = 0.25 + 0.75 * Math.sqrt(sel[c] / maxSel);
        ctx.fillRect(L + (c % NX) * cw, T + (NY - 1 - Math.floor(c / NX)) * ch, cw + 0.5, ch + 0.5);
      }
      ctx.globalAlpha = 1;
    }
    // axes
    ctx.fillStyle = fg;
    ctx.strokeRect(L, T, W - L - R, H - T - B);
    ctx.textAlign = 'center';
    for (const t of ticks(xr[0], xr[1])) {
      ctx.fillText(String(t), px(t), H - B + 14);
      ctx.beginPath(); ctx.moveTo(px(t), H - B); ctx.lineTo(px(t), H - B + 4); ctx.stroke();
    }
    ctx.fillText(d.xLabel, L + (W - L - R) / 2, H - 6);
    ctx.textAlign = 'right';
    for (const t of ticks(yr[0], yr[1], 5)) {
      ctx.fillText(String(t), L - 6, py(t) + 4);
      ctx.beginPath(); ctx.moveTo(L - 4, py(t)); ctx.lineTo(L, py(t)); ctx.stroke();
    }
    ctx.save();
    ctx.translate(14, T + (H - T - B) / 2);
    ctx.rotate(-Math.PI / 2);
    ctx.textAlign = 'center';
    ctx.fillText(d.yLabel, 0, 0);
    ctx.restore();
    // current range filters and the box being dragged
    const box = drag ?? (d.xRange && d.yRange ? { x0: px(d.xRange[0]), x1: px(d.xRange[1]), y0: py(d.yRange[0]), y1: py(d.yRange[1]) } : null);
    if (box) {
      ctx.setLineDash([4, 3]);
      ctx.strokeStyle = '#D55E00'; // Okabe & Ito vermillion
      ctx.strokeRect(Math.min(box.x0, box.x1), Math.min(box.y0, box.y1), Math.abs(box.x1 - box.x0), Math.abs(box.y1 - box.y0));
      ctx.setLineDash([]);
    }
  }

  function nearest(mx: number, my: number): number {
    if (!data || data.selection.length > POINTS_BELOW) return -1;
    let best = -1, bestD = 36;
    for (const r of data.selection) {
      const dx = px(data.x[r]) - mx, dy = py(data.y[r]) - my;
      const dd = dx * dx + dy * dy;
      if (dd < bestD) { bestD = dd; best = r; }
    }
    return best;
  }

  const pos = (e: PointerEvent) => {
    const b = canvas.getBoundingClientRect();
    return { x: ((e.clientX - b.left) / b.width) * W, y: ((e.clientY - b.top) / b.height) * H };
  };
  let start: { x: number; y: number } | null = null;
  canvas.addEventListener('pointerdown', (e) => { start = pos(e); canvas.setPointerCapture(e.pointerId); });
  canvas.addEventListener('pointermove', (e) => {
    const p = pos(e);
    if (start) { draw({ x0: start.x, y0: start.y, x1: p.x, y1: p.y }); return; }
    const r = nearest(p.x, p.y);
    tip.hidden = r < 0;
    if (r >= 0) { tip.textContent = h.describe(r); canvas.style.cursor = 'pointer'; } else canvas.style.cursor = 'crosshair';
  });
  canvas.addEventListener('pointerup', (e) => {
    const p = pos(e);
    const s = start;
    start = null;
    if (!s) return;
    if (Math.abs(p.x - s.x) < 4 && Math.abs(p.y - s.y) < 4) {
      const r = nearest(p.x, p.y);
      if (r >= 0) h.onOpen(r);
      else draw();
      return;
    }
    const xs = [ix(s.x), ix(p.x)].sort((a, b) => a - b) as [number, number];
    const ys = [iy(s.y), iy(p.y)].sort((a, b) => a - b) as [number, number];
    h.onBrush(xs, ys);
  });
  canvas.addEventListener('pointerleave', () => { tip.hidden = true; });

  return (d: PlotData) => {
    data = d;
    xr = extent(d.x, d.n);
    yr = extent(d.y, d.n);
    draw();
  };
}
