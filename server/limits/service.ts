import type { HeftContext } from '../context.js';
import { toIso } from '../clock.js';
import { conflict, DomainError } from '../errors.js';
import { defaultSigmaMethod, estimateSigma, meanChartLimits, spreadChartLimits, type SigmaMethod } from '../stats/control-limits.js';
import type { ApproveBody, LimitsVersionView, Proposal } from './contract.js';
import type { Exclusion, LimitsVersion } from './repository.js';

export const MIN_BASELINE_CHECKS = 20;

export const versionView = (v: LimitsVersion): LimitsVersionView => ({
  id: v.id,
  lineId: v.lineId,
  productId: v.productId,
  centre: v.centre,
  sigma: v.sigma,
  method: v.method,
  baselineFrom: toIso(v.baselineFrom),
  baselineTo: toIso(v.baselineTo),
  baselineChecks: v.baselineChecks,
  approvedBy: v.approvedBy,
  approvedAt: toIso(v.approvedAt),
  note: v.note,
  excluded: v.excluded,
});

/** The reasons by check id; a check not in the baseline, or named twice, is a 400 naming its place in `exclude`. */
function excludedReasons(baseline: readonly { id: number }[], exclude: readonly Exclusion[]): Map<number, string> {
  const ids = new Set(baseline.map((c) => c.id));
  const reasons = new Map<number, string>();
  exclude.forEach((x, i) => {
    const field = `exclude.${i}.checkId`;
    if (!ids.has(x.checkId)) throw new DomainError(400, 'bad-request', `${field}: check ${x.checkId} is not in the baseline`, [{ field, message: `check ${x.checkId} is not in the baseline` }]);
    if (reasons.has(x.checkId)) throw new DomainError(400, 'bad-request', `${field}: check ${x.checkId} is left out twice`, [{ field, message: `check ${x.checkId} is left out twice` }]);
    reasons.set(x.checkId, x.reason);
  });
  return reasons;
}

/** Proposing limits from a baseline and approving a version: the version, its audit row and its live message in one transaction. */
export function createLimitsService(ctx: Pick<HeftContext, 'db' | 'clock' | 'repos' | 'monitor'>) {
  const { repos, monitor, clock, db } = ctx;

  /** Limits estimated from the running product's checks between from and to, with the baseline points that break them. */
  function propose(lineId: number, from: number, to: number, requested?: SigmaMethod, exclude: readonly Exclusion[] = []): Proposal {
    const { run, product } = monitor.lineState(lineId);
    if (!run || !product) throw conflict('no product is running on this line');
    if (to <= from) throw new DomainError(400, 'bad-request', 'to: must be after from', [{ field: 'to', message: 'must be after from' }]);
    const all = repos.checks.inRunBetween(run.id, from, to);
    const reasonOf = excludedReasons(all, exclude);
    const baseline = all.filter((c) => !reasonOf.has(c.id));
    if (baseline.length < MIN_BASELINE_CHECKS) {
      const left = reasonOf.size > 0 ? ` after ${reasonOf.size} left out` : '';
      throw new DomainError(422, 'baseline-too-small', `the baseline holds ${baseline.length} checks of the running product${left}; at least ${MIN_BASELINE_CHECKS} are needed`);
    }
    const chosen = requested ?? defaultSigmaMethod(product.subgroupSize);
    if (chosen !== 'mrbar' && baseline.every((c) => c.n < 2)) throw new DomainError(422, 'wrong-method', `${chosen} needs checks of two or more packs; use mrbar for individuals`);
    const estimate = estimateSigma(baseline, chosen);
    const model = { centre: estimate.centre, sigma: estimate.sigma };
    const breaking = baseline.flatMap((c) => {
      const mean = meanChartLimits(model, c.n);
      const spread = spreadChartLimits(model.sigma, c.n);
      const reasons: string[] = [];
      if (c.mean > mean.ucl) reasons.push('mean above the upper limit');
      if (c.mean < mean.lcl) reasons.push('mean below the lower limit');
      const spreadValue = spread.chart === 'S' ? c.sd : spread.chart === 'R' ? c.range : null;
      if (spreadValue !== null && spreadValue > spread.ucl) reasons.push(`${spread.chart === 'S' ? 'sd' : 'range'} above its upper limit`);
      return reasons.length ? [{ checkId: c.id, takenAt: toIso(c.takenAt), mean: c.mean, sd: c.sd, range: c.range, reasons }] : [];
    });
    return {
      lineId,
      productId: product.id,
      from: toIso(from),
      to: toIso(to),
      centre: estimate.centre,
      sigma: estimate.sigma,
      method: estimate.method,
      checks: estimate.checks,
      packs: estimate.packs,
      meanChart: meanChartLimits(model, product.subgroupSize),
      spreadChart: spreadChartLimits(model.sigma, product.subgroupSize),
      points: all.map((c) => ({ checkId: c.id, takenAt: toIso(c.takenAt), n: c.n, mean: c.mean, sd: c.sd, range: c.range, excludedReason: reasonOf.get(c.id) ?? null })),
      breaking,
    };
  }

  return {
    propose,

    /** Approves a new version of the line's limits for its running product; the line starts a fresh segment. */
    approve(lineId: number, body: ApproveBody, actor: string): LimitsVersion {
      const product = monitor.lineState(lineId).product;
      if (!product) throw conflict('no product is running on this line');
      const fields =
        body.basis === 'baseline'
          ? (() => {
              const excluded = body.exclude ?? [];
              const p = propose(lineId, body.from, body.to, body.method, excluded);
              return { centre: p.centre, sigma: p.sigma, method: p.method, baselineFrom: body.from, baselineTo: body.to, baselineChecks: p.checks, excluded };
            })()
          : { centre: body.centre, sigma: body.sigma, method: 'standard' as const, baselineFrom: null, baselineTo: null, baselineChecks: null, excluded: [] };
      const now = clock.now();
      const { version, changed } = db.transaction(() => {
        const v = repos.limits.insert({ lineId, productId: product.id, ...fields, approvedBy: actor, approvedAt: now, note: body.note ?? null });
        repos.audit.record({ at: now, actor, action: 'limits.approve', entity: 'line', entityId: lineId, after: versionView(v) });
        return { version: v, changed: monitor.limitsChanged(lineId) };
      }).immediate();
      changed.afterCommit();
      return version;
    },
  };
}
