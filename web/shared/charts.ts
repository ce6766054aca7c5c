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

export function meanChart(target: HTMLElement, width: number, height: number, data: uPlot.AlignedData, compact = false): uPlot {
  const limit = { stroke: css('--act'), width: 2, points: { show: false } };
  const zone = (dash: number[]) => ({ stroke: css('--muted'), width: 1, dash, points: { show: false } });
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
        { label: 'centre', stroke: css('--steady'), width: 1, points: { show: false } },
        { label: '+2σ', ...zone([6, 4]) },
        { label: '−2σ', ...zone([6, 4]) },
        { label: '+1σ', ...zone([2, 4]) },
        { label: '−1σ', ...zone([2, 4]) },
        { label: 'signal', stroke: css('--act'), width: 0, points: { show: true, size: compact ? 9 : 12, fill: css('--act'), stroke: css('--act') }, paths: () => null },
      ],
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
        { label: 'upper limit', stroke: css('--act'), width: 2, points: { show: false } },
      ],
    },
    [points.map((p) => p.at), values, points.map((p) => ucl(p.n))],
    target,
  );
}
