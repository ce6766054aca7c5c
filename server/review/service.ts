import type { StoredAlert } from '../alerts/repository.js';
import type { HeftContext } from '../context.js';
import { DomainError, notFound } from '../errors.js';
import type { Line } from '../lines/repository.js';
import { falseAlarmFigure } from '../monitor/false-alarm-cache.js';
import { alertViewFrom } from '../monitor/views.js';
import type { LimitsVersion } from '../limits/repository.js';
import { STOP_REASONS, type StopReason } from '../lines/stops-repository.js';
import type { Product, ProductVersion } from '../products/repository.js';
import { capability, capabilityFromSources, sigmaDegreesOfFreedom, varianceOfMeanFromChecks, type SigmaUncertainty } from '../stats/capability.js';
import { estimateSigma, defaultSigmaMethod } from '../stats/control-limits.js';
import { mean, sampleSd } from '../stats/descriptive.js';
import { averageSystemPosition, lowestTarget, referenceTestPassChance, referenceTestPlan } from '../stats/net-quantity.js';
import { alarmLoad, median } from '../stats/alarm-load.js';
import { resolveRuleSet } from '../stats/rule-set.js';
import { fTest, welchTest } from '../stats/two-sample.js';
import type { CapabilityView, Comparison, LineSection, ProductSection, Review } from './contract.js';
import { createReviewRepository, type CheckMoments } from './repository.js';

/** A p-value in words for the comparison's sentence: `p = 0.0312`, or `p < 0.0001` below that. */
const pWords = (p: number) => (p < 0.0001 ? 'p < 0.0001' : `p = ${p.toFixed(4)}`);

export const MIN_CAPABILITY_CHECKS = 20;
const MINUTE = 60_000;
const DAY = 86_400_000;

const overlap = (a0: number, a1: number, b0: number, b1: number) => Math.max(0, Math.min(a1, b1) - Math.max(a0, b0));

/** Minutes of [from, to) during which the line ran the product: its runs' overlap with the range, less the time it stood stopped. */
function minutesRunning(ctx: HeftContext, lineId: number, productId: number | null, from: number, to: number): number {
  const now = ctx.clock.now();
  const end = Math.min(to, now);
  const stops = ctx.repos.stops.during(lineId, from, end);
  let ms = 0;
  for (const r of ctx.repos.lines.runsInRange(lineId, from, end)) {
    if (productId !== null && r.productId !== productId) continue;
    const r0 = Math.max(from, r.startedAt);
    const r1 = Math.min(end, r.endedAt ?? now);
    if (r1 <= r0) continue;
    ms += r1 - r0;
    for (const s of stops) ms -= overlap(r0, r1, s.stoppedAt, s.startedAt ?? now);
  }
  return Math.max(0, ms) / MINUTE;
}

/** Hours the line stood stopped in [from, to), by reason. */
function stoppedByReason(ctx: HeftContext, lineId: number, from: number, to: number) {
  const now = ctx.clock.now();
  const end = Math.min(to, now);
  const byReason = new Map<string, { reason: StopReason; stops: number; hours: number }>();
  for (const s of ctx.repos.stops.during(lineId, from, end)) {
    const entry = byReason.get(s.reason) ?? { reason: s.reason, stops: 0, hours: 0 };
    entry.stops += 1;
    entry.hours += overlap(from, end, s.stoppedAt, s.startedAt ?? now) / 3_600_000;
    byReason.set(s.reason, entry);
  }
  // in the list's own order (a person's reasons, then the calendar's), not in the order they happened
  return [...byReason.values()].sort((a, b) => STOP_REASONS.indexOf(a.reason) - STOP_REASONS.indexOf(b.reason));
}

function unstableAt(alerts: StoredAlert[], to: number): StoredAlert[] {
  return alerts.filter((a) => a.severity === 'act' && (a.kind === 'mean-shift' || a.kind === 'spread-up') && a.openedAt < to && (a.resolvedAt === null || a.resolvedAt > to));
}

export function createReviewService(ctx: HeftContext) {
  const repo = createReviewRepository(ctx.db);
  const { repos } = ctx;

  /** The within-check σ in force for a part of the range, where it comes from, and how uncertain that makes it. */
  function withinSigma(product: Product, limits: LimitsVersion | null, checks: CheckMoments[]): { sigma: number; source: string; uncertainty: SigmaUncertainty; interval: string } | null {
    const LABEL: Record<string, string> = { rbar: 'R̄/d2', sbar: 's̄/c4', pooled: 'pooled s', mrbar: 'MR̄/d2', standard: 'set from a standard' };
    if (limits) {
      const head = `approved limits v${limits.id}, ${LABEL[limits.method] ?? limits.method}`;
      if (limits.method === 'standard' || limits.baselineChecks === null || limits.baselineChecks < 2) {
        return { sigma: limits.sigma, source: head, uncertainty: { kind: 'known' }, interval: 'σ taken as known (set, not estimated): only the mean is uncertain' };
      }
      const n = repos.products.versionAt(product.id, limits.approvedAt)?.product.subgroupSize ?? product.subgroupSize;
      const df = sigmaDegreesOfFreedom(limits.method, Array(limits.baselineChecks).fill(n));
      return {
        sigma: limits.sigma,
        source: `${head} of ${limits.baselineChecks} baseline checks`,
        uncertainty: { kind: 'estimated', df },
        interval: `σ from the baseline with ν ≈ ${df.toFixed(0)} (Patnaik), the mean from this range's check means`,
      };
    }
    if (product.sigma !== null) {
      return { sigma: product.sigma, source: `the product's configured σ (settings v${product.version})`, uncertainty: { kind: 'known' }, interval: 'σ configured, taken as known: only the mean is uncertain (Student’s t on the check means)' };
    }
    if (checks.length < 2 || !checks.some((c) => c.n >= 2 || product.subgroupSize === 1)) return null;
    const method = defaultSigmaMethod(product.subgroupSize);
    const estimated = estimateSigma(checks, method);
    const df = sigmaDegreesOfFreedom(method, checks.map((c) => c.n));
    return {
      sigma: estimated.sigma,
      source: `estimated from this range (${LABEL[method]})`,
      uncertainty: { kind: 'estimated', df },
      interval: `σ from this range's ${checks.length} checks with ν ≈ ${df.toFixed(0)} (Patnaik), the mean from their check means`,
    };
  }

  function productSection(line: Line, version: ProductVersion, limits: LimitsVersion | null, from: number, to: number, lineAlerts: StoredAlert[], checks: CheckMoments[]): ProductSection {
    const product = version.product;
    const packs = repo.packs(line.id, product.id, from, to);
    const unit = product.unit;
    const toKg = unit === 'g' ? 1 / 1000 : 1;
    const overallMean = packs.length ? mean(packs) : null;
    const overallSd = sampleSd(packs);
    const within = withinSigma(product, limits, checks);
    const meanVariance = varianceOfMeanFromChecks(checks.map((c) => c.mean));

    const lsl = product.lsl ?? product.t1;
    const usl = product.usl;
    let capabilityResult: CapabilityView;
    const unstable = unstableAt(lineAlerts, to);
    if (checks.length < MIN_CAPABILITY_CHECKS) {
      capabilityResult = { refused: `only ${checks.length} checks in the range; at least ${MIN_CAPABILITY_CHECKS} are needed for an index that means something` };
    } else if (unstable.length > 0) {
      capabilityResult = { refused: `the process was not stable: ${unstable.length} act-level alert${unstable.length > 1 ? 's were' : ' was'} still open at the end of the range (alert ${unstable.map((a) => a.id).join(', ')}); an index from an unstable process means nothing` };
    } else if (lsl === null || overallMean === null || overallSd === null || !within || meanVariance === null) {
      capabilityResult = { refused: 'no specification limit (and no T1) or no spread to judge against' };
    } else {
      capabilityResult = {
        lsl,
        usl,
        within: {
          sigma: within.sigma,
          source: within.source,
          degreesOfFreedom: within.uncertainty.kind === 'known' ? null : within.uncertainty.df,
          interval: within.interval,
          ...capabilityFromSources(overallMean, within.sigma, { value: meanVariance, df: checks.length - 1 }, within.uncertainty, lsl, usl),
        },
        overall: { sigma: overallSd, degreesOfFreedom: packs.length - 1, interval: `Bissell (1990) and chi-square on all ${packs.length} packs (ν = ${packs.length - 1})`, ...capability(overallMean, overallSd, packs.length, packs.length - 1, lsl, usl) },
      };
    }

    const netQuantity =
      product.t1 !== null && product.t2 !== null && overallMean !== null
        ? averageSystemPosition(packs, product.nominal, product.t1, product.t2, overallMean, overallSd)
        : null;

    const minutes = minutesRunning(ctx, line.id, product.id, from, to);
    const packsMade = line.packsPerHour === null ? null : (line.packsPerHour * minutes) / 60;
    const giveawayPerPack = overallMean === null ? null : overallMean - product.nominal;
    const sigmaForTarget = within?.sigma ?? overallSd;
    const lowest = product.t1 !== null && product.t2 !== null && sigmaForTarget !== null ? lowestTarget(product.nominal, product.t1, product.t2, sigmaForTarget) : null;
    // an inspector's reference test on a lot of an hour's output, judged at the advised target
    const plan = referenceTestPlan(line.packsPerHour ?? 1000);
    const referenceTest =
      plan && lowest !== null && sigmaForTarget !== null && product.t1 !== null
        ? (() => {
            const chance = referenceTestPassChance(plan, lowest, sigmaForTarget, product.nominal, product.t1);
            return {
              lotSize: line.packsPerHour,
              sampleSize: plan.sampleSize,
              factor: plan.factor,
              allowance: plan.factor * sigmaForTarget,
              passMean: chance.mean,
              passCount: chance.count,
            };
          })()
        : null;
    const savingPerPack = lowest !== null && overallMean !== null ? Math.max(0, overallMean - lowest) : null;
    const money = (perPack: number | null) => (perPack === null || packsMade === null || product.costPerKg === null ? null : perPack * toKg * packsMade * product.costPerKg);

    return {
      product: { id: product.id, code: product.code, name: product.name, nominal: product.nominal, unit, target: product.target, tne: product.tne, t1: product.t1, t2: product.t2, lsl: product.lsl, usl: product.usl, costPerKg: product.costPerKg },
      checks: checks.length,
      packs: packs.length,
      mean: overallMean,
      sd: overallSd,
      capability: capabilityResult,
      netQuantity,
      giveaway: {
        perPack: giveawayPerPack,
        percentOfNominal: giveawayPerPack === null ? null : (100 * giveawayPerPack) / product.nominal,
        packsMade,
        hoursRunning: minutes / 60,
        cost: money(giveawayPerPack),
      },
      targetAdvice: {
        sigma: sigmaForTarget,
        lowestTarget: lowest,
        rule: 'max(Qn, T1 + 1.96σ, T2 + 3.72σ): about 2.5 % below T1 and 1 in 10,000 below T2 (common practice for the average system)',
        savingPerPack,
        saving: money(savingPerPack),
        referenceTest,
      },
      points: checks.map((c: CheckMoments) => ({ checkId: c.id, at: new Date(c.takenAt).toISOString(), mean: c.mean, n: c.n, sd: c.sd, range: c.range })),
      limits: within ? { centre: limits?.centre ?? product.target, sigma: within.sigma } : null,
      settings: {
        from: new Date(from).toISOString(),
        to: new Date(to).toISOString(),
        productVersion: version.version,
        productVersionFrom: new Date(version.validFrom).toISOString(),
        limitsVersion: limits?.id ?? null,
      },
    };
  }

  /**
   * The range cut where a product's settings or the line's limits for it changed, so that every check is
   * judged by the settings and limits in force when it was taken.
   */
  function settingsParts(lineId: number, productIds: number[], from: number, to: number) {
    const parts: { version: ProductVersion; limits: LimitsVersion | null; from: number; to: number }[] = [];
    for (const productId of productIds) {
      const cuts = new Set<number>([from, to]);
      for (const v of repos.products.versionsDuring(productId, from, to)) if (v.validFrom > from) cuts.add(v.validFrom);
      for (const at of repos.limits.approvalsDuring(lineId, productId, from, to)) cuts.add(at);
      const sorted = [...cuts].sort((a, b) => a - b);
      for (let i = 0; i + 1 < sorted.length; i += 1) {
        const a = sorted[i] as number;
        const b = sorted[i + 1] as number;
        const version = repos.products.versionAt(productId, a);
        if (version) parts.push({ version, limits: repos.limits.inForceAt(lineId, productId, a), from: a, to: b });
      }
    }
    return parts;
  }

  function lineSection(line: Line, from: number, to: number): LineSection {
    const alerts = repos.alerts.overlapping(line.id, from, to);
    const inRange = alerts.filter((a) => a.openedAt >= from && a.openedAt < to);
    const sections: ProductSection[] = [];
    let due = 0;
    let predicted = 0;
    let predictedRunning = 0;
    for (const part of settingsParts(line.id, repo.productsIn(line.id, from, to), from, to)) {
      const p = part.version.product;
      const dueHere = minutesRunning(ctx, line.id, p.id, part.from, part.to) / p.samplingMinutes;
      const arl = falseAlarmFigure(resolveRuleSet(p.rules), p.subgroupSize, p.samplingMinutes).arlChecks;
      due += dueHere;
      predictedRunning += dueHere / arl;
      const checks = repo.checks(line.id, p.id, part.from, part.to);
      if (checks.length === 0) continue;
      sections.push(productSection(line, part.version, part.limits, part.from, part.to, alerts, checks));
      predicted += checks.length / arl;
    }
    due = Math.floor(due + 1e-9);
    const taken = sections.reduce((acc, s) => acc + s.checks, 0);
    const days = Math.max((Math.min(to, ctx.clock.now()) - from) / DAY, 1 / 24);
    const shiftAlerts = inRange.filter((a) => a.kind === 'mean-shift' || a.kind === 'spread-up');
    const events = inRange.map((a) => ({
      ...alertViewFrom(repos.alerts, a),
      minutesToAcknowledge: a.acknowledgedAt === null ? null : (a.acknowledgedAt - a.openedAt) / MINUTE,
      minutesToResolve: a.resolvedAt === null ? null : (a.resolvedAt - a.openedAt) / MINUTE,
    }));
    const stopped = stoppedByReason(ctx, line.id, from, to);
    return {
      line: { id: line.id, code: line.code, name: line.name, packsPerHour: line.packsPerHour },
      running: {
        hoursRunning: minutesRunning(ctx, line.id, null, from, to) / 60,
        hoursStopped: stopped.reduce((acc, s) => acc + s.hours, 0),
        stopped,
      },
      sampling: { checksTaken: taken, checksDue: due, kept: taken >= due },
      events,
      medianMinutesToAcknowledge: median(events.flatMap((e) => (e.minutesToAcknowledge === null ? [] : [e.minutesToAcknowledge]))),
      medianMinutesToResolve: median(events.flatMap((e) => (e.minutesToResolve === null ? [] : [e.minutesToResolve]))),
      alertLoad: {
        days,
        shiftAlerts: shiftAlerts.length,
        perDay: shiftAlerts.length / days,
        predictedFalseAlarmsPerDay: predicted / days,
        predictedFalseAlarmsWhileRunning: predictedRunning,
        ...alarmLoad(inRange, from, Math.min(to, ctx.clock.now())),
        note: 'predicted: in-control false alarms of the enabled rule set (ARL₀) for the checks taken; shift alerts above it point to real shifts',
      },
      operators: repo.operatorsIn(line.id, from, to),
      products: sections,
    };
  }

  return {
    review(from: number, to: number, lineIds: number[] | null): Review {
      const lines = repos.lines.list().filter((l) => lineIds === null || lineIds.includes(l.id));
      if (lineIds) for (const id of lineIds) if (!lines.some((l) => l.id === id)) throw notFound(`line ${id}`);
      return { from: new Date(from).toISOString(), to: new Date(to).toISOString(), timeZone: ctx.config.timeZone, lines: lines.map((l) => lineSection(l, from, to)) };
    },

    /** Welch's t on the pack weights of two periods (or two crews) of one line and product, and an F-test of their spread. */
    compare(lineId: number, a: Period, b: Period, productId?: number): Comparison {
      const line = repos.lines.get(lineId);
      if (!line) throw notFound(`line ${lineId}`);
      const pid = productId ?? repo.productsIn(lineId, a.from, a.to)[0];
      const product = pid === undefined ? null : repos.products.get(pid);
      if (!product) throw new DomainError(422, 'no-data', 'period A holds no checks on this line');
      const packsA = repo.packs(lineId, product.id, a.from, a.to, a.operators ?? null);
      const packsB = repo.packs(lineId, product.id, b.from, b.to, b.operators ?? null);
      if (packsA.length < 2 || packsB.length < 2) throw new DomainError(422, 'no-data', `each period needs at least two packs of ${product.code} (A has ${packsA.length}, B has ${packsB.length})`);
      const ma = { n: packsA.length, mean: mean(packsA), sd: sampleSd(packsA) as number };
      const mb = { n: packsB.length, mean: mean(packsB), sd: sampleSd(packsB) as number };
      const welch = welchTest(mb, ma);
      const f = fTest(mb, ma);
      const u = product.unit;
      const d = u === 'kg' ? 4 : 2;
      const dir = welch.difference < 0 ? 'fell' : 'rose';
      const [lo, hi] = welch.difference < 0 ? [-welch.ci95[1], -welch.ci95[0]] : welch.ci95;
      const words =
        `From A to B the mean ${dir} ${Math.abs(welch.difference).toFixed(d)} ${u}, 95 % CI ${lo.toFixed(d)} to ${hi.toFixed(d)} ${u} (Welch's t = ${welch.t.toFixed(2)}, ${pWords(welch.p)}). ` +
        `The spread (sd) went from ${ma.sd.toFixed(d)} to ${mb.sd.toFixed(d)} ${u} (F = ${f.f.toFixed(2)}, ${pWords(f.p)}${f.p < 0.05 ? ', a clear change' : ', no clear change'}).`;
      return { line: { id: line.id, code: line.code }, product: { id: product.id, code: product.code, unit: u }, a: ma, b: mb, welch, fTest: f, words };
    },
  };
}

export interface Period {
  from: number;
  to: number;
  operators?: string[];
}

export type ReviewService = ReturnType<typeof createReviewService>;
