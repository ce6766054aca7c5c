import type { LineStop } from '../lines/stops-repository.js';
import type { LineStopView } from '../shared/contract.js';
import type { HeftContext } from '../context.js';
import { toIso } from '../clock.js';
import { falseAlarmFigure } from '../monitor/false-alarm-cache.js';
import { alertViewFrom } from '../monitor/views.js';
import { productView } from '../products/views.js';
import { summarizeSample } from '../stats/sample-summary.js';
import type { StatusView } from './contract.js';

/** A stop as the API shows it. */
export function stopView(stop: LineStop | null): LineStopView | null {
  return stop ? { reason: stop.reason, note: stop.note, since: new Date(stop.stoppedAt).toISOString(), by: stop.stoppedBy } : null;
}

/** Where a line stands now, from the monitor's memory and the latest window of checks. */
export function lineStatusView(ctx: HeftContext, lineId: number): StatusView {
  const { monitor, repos, clock } = ctx;
  const state = monitor.lineState(lineId);
  const { product, run } = state;
  const window = run && product ? repos.checks.latestOfRun(run.id, product.windowSize) : [];
  const pooled = window.flatMap((c) => c.weights);
  const set = state.ruleSet;
  return {
      line: { id: state.line.id, code: state.line.code, name: state.line.name },
      state: product ? state.status : 'idle',
      product: product ? productView(product) : null,
      run: run ? { id: run.id, startedAt: toIso(run.startedAt) } : null,
      limits: state.limits,
      window:
        product && pooled.length > 0
          ? { checks: window.length, ...summarizeSample(pooled, product.target) }
          : null,
      detectors: state.limits
        ? {
            points: state.segment.count,
            ewma: set.enabled['ewma-shift'] ? { ...set.ewma, value: state.segment.ewma.value } : null,
            cusum: set.enabled['cusum-shift'] ? { ...set.cusum, upper: state.segment.cusum.upper, lower: state.segment.cusum.lower } : null,
          }
        : null,
      openAlerts: state.openAlerts.map((a) => alertViewFrom(repos.alerts, a)),
      lastCheckAt: toIso(state.lastCheckAt),
      running: state.stop === null,
      stop: stopView(state.stop),
      nextCheckDue: toIso(state.nextCheckDue),
      overdue: state.overdue,
      falseAlarm: product && state.limits ? falseAlarmFigure(set, product.subgroupSize, product.samplingMinutes) : null,
      now: toIso(clock.now()),
  };
}
