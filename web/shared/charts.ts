import uPlot from 'uplot';
import 'uplot/dist/uPlot.min.css';

/** Charts drawn by uPlot from columnar arrays (time, values, null for gaps). */

export interface ChartPoint {
  checkId: number;
  at: number; // seconds
  mean: number;
  n: number;
  sd: number | null;
  range: number;
  /** Where the check's weights came from (keyed, scale, bridge, checkweigher). */
  source?: string;
}

const css = (name: string) => getComputedStyle(document.documentElement).getPropertyValue(name).trim() || '#888';

function axes(): uPlot.Axis[] {
  const stroke = css('--muted');
  const grid = { stroke: css('--line'), width: 1 };
  return [
    { stroke, grid, ticks: grid },
    { stroke, grid, ticks: grid, size: 60 },
  ];
}

/** Mean chart: each check's mean, limits at ±3σ/√nᵢ and zones at ±1σ/√nᵢ, ±2σ/√nᵢ per point (exact for variable n). */
export function meanChartData(points: readonly ChartPoint[], centre: number, sigma: number, signalled: ReadonlySet<number>, byIndex = false): uPlot.AlignedData {
  const s = points.map((p) => sigma / Math.sqrt(p.n));
  return [
    // a wall tile spaces checks evenly (check by check); the detail view keeps real time
    points.map((p, i) => (byIndex ? i : p.at)),
    points.map((p) => p.mean),
    s.map((x) => centre + 3 * x),
    s.map((x) => centre - 3 * x),
    points.map(() => centre),
    s.map((x) => centre + 2 * x),
    s.map((x) => centre - 2 * x),
    s.map((x) => centre + x),
    s.map((x) => centre - x),
    points.map((p) => (signalled.has(p.checkId) ? p.mean : null)),
  ];
}

/** A hollow diamond on every signalled check (series `signal`), drawn over the line; the caption's ◇. */
function signalDiamonds(seriesIndex: number, size: number): uPlot.Plugin {
  return {
    hooks: {
      draw: (u) => {
        const xs = u.data[0];
        const ys = u.data[seriesIndex];
        if (!ys) return;
        const ctx = u.ctx;
        const r = size * uPlot.pxRatio;
        ctx.save();
        ctx.strokeStyle = css('--act');
        ctx.fillStyle = css('--card');
        ctx.lineWidth = 2 * uPlot.pxRatio;
        for (let i = 0; i < ys.length; i += 1) {
          const y = ys[i];
          const x = xs[i];
          if (y === null || y === undefined || x === undefined) continue;
          const cx = u.valToPos(x, 'x', true);
          const cy = u.valToPos(y, 'y', true);
          ctx.beginPath();
          ctx.moveTo(cx, cy - r);
          ctx.lineTo(cx + r, cy);
          ctx.lineTo(cx, cy + r);
          ctx.lineTo(cx - r, cy);
          ctx.closePath();
          ctx.fill();
          ctx.stroke();
        }
        ctx.restore();
      },
    },
  };
}

/**
 * The limits solid in the text colour, the centre thin and muted, the ±1σ and ±2σ zones as faint
 * bands, and signalled checks as hollow diamonds: status colours stay for status.
 */
export function meanChart(target: HTMLElement, width: number, height: number, data: uPlot.AlignedData, compact = false): uPlot {
  const limit = { stroke: css('--fg'), width: compact ? 1.5 : 2, points: { show: false } };
  const zone = { stroke: 'transparent', width: 0, points: { show: false } };
  return new uPlot(
    {
      width,
      height,
      legend: { show: !compact },
      cursor: { show: !compact },
      axes: compact ? [{ show: false }, { size: 50, stroke: css('--muted'), grid: { show: false } }] : axes(),
      scales: { x: { time: !compact } },
      series: [
        {},
        { label: 'mean', stroke: css('--fg'), width: 2, points: { show: true, size: compact ? 4 : 6 } },
        { label: 'upper limit', ...limit },
        { label: 'lower limit', ...limit },
        { label: 'centre', stroke: css('--muted'), width: 1, points: { show: false } },
        { label: '±2σ zone', ...zone },
        { label: '−2σ', ...zone },
        { label: '±1σ zone', ...zone },
        { label: '−1σ', ...zone },
        { label: 'signal ◇', stroke: css('--act'), width: 0, points: { show: false }, paths: () => null },
      ],
      bands: [
        { series: [5, 6], fill: css('--zone') },
        { series: [7, 8], fill: css('--zone') },
      ],
      plugins: [signalDiamonds(9, compact ? 5 : 7)],
    },
    data,
    target,
  );
}

/** Spread chart: s (or R, or the moving range) of each check against its upper limit. */
export function spreadChart(target: HTMLElement, width: number, height: number, points: readonly ChartPoint[], chart: 'R' | 'S' | 'MR', ucl: (n: number) => number): uPlot {
  const values = points.map((p, i) => {
    if (chart === 'S') return p.sd;
    if (chart === 'R') return p.range;
    const previous = points[i - 1];
    return previous ? Math.abs(p.mean - previous.mean) : null;
  });
  return new uPlot(
    {
      width,
      height,
      axes: axes(),
      scales: { x: { time: true } },
      series: [
        {},
        { label: chart === 'S' ? 'sd' : chart === 'R' ? 'range' : 'moving range', stroke: css('--fg'), width: 2, points: { show: true, size: 6 } },
        { label: 'upper limit', stroke: css('--fg'), width: 2, points: { show: false } },
      ],
    },
    [points.map((p) => p.at), values, points.map((p) => ucl(p.n))],
    target,
  );
}
