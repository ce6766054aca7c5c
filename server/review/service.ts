import type { StoredAlert } from '../alerts/repository.js';
import type { HeftContext } from '../context.js';
import { DomainError, notFound } from '../errors.js';
import type { Line } from '../lines/repository.js';
import { falseAlarmFigure } from '../monitor/false-alarm-cache.js';
import { alertViewFrom } from '../monitor/views.js';
import type { Product } from '../products/repository.js';
import { capability } from '../stats/capability.js';
import { estimateSigma, defaultSigmaMethod } from '../stats/control-limits.js';
import { mean, sampleSd } from '../stats/descriptive.js';
import { averageSystemPosition, lowestTarget } from '../stats/net-quantity.js';
import { resolveRuleSet } from '../stats/rule-set.js';
import { fTest, welchTest } from '../stats/two-sample.js';
import type { CapabilityView, Comparison, LineSection, ProductSection, Review } from './contract.js';
import { createReviewRepository, type CheckMoments } from './repository.js';

/** A p-value in words for the comparison's sentence: `p = 0.0312`, or `p < 0.0001` below that. */
const pWords = (p: number) => (p < 0.0001 ? 'p < 0.0001' : `p = ${p.toFixed(4)}`);

export const MIN_CAPABILITY_CHECKS = 20;
const MINUTE = 60_000;
const DAY = 86_400_000;

function median(values: number[]): number | null {
  if (values.length === 0) return null;
  const sorted = [...values].sort((a, b) => a - b);
  const mid = Math.floor(sorted.length / 2);
  return sorted.length % 2 ? (sorted[mid] as number) : ((sorted[mid - 1] as number) + (sorted[mid] as number)) / 2;
}

/** Minutes of [from, to) during which the line ran the product (its runs' overlap with the range). */
function minutesRunning(ctx: HeftContext, lineId: number, productId: number | null, from: number, to: number): number {
  const now = ctx.clock.now();
  return ctx.repos.lines
    .runsInRange(lineId, from, to)
    .filter((r) => productId === null || r.productId === productId)
    .reduce((acc, r) => acc + Math.max(0, Math.min(to, r.endedAt ?? now, now) - Math.max(from, r.startedAt)) / MINUTE, 0);
}

function unstableAt(alerts: StoredAlert[], to: number): StoredAlert[] {
  return alerts.filter((a) => a.severity === 'act' && (a.kind === 'mean-shift' || a.kind === 'spread-up') && a.openedAt < to && (a.resolvedAt === null || a.resolvedAt > to));
}

export function createReviewService(ctx: HeftContext) {
  const repo = createReviewRepository(ctx.db);
  const { repos } = ctx;

  function productSection(line: Line, product: Product, from: number, to: number, lineAlerts: StoredAlert[]): ProductSection {
    const checks = repo.checks(line.id, product.id, from, to);
    const packs = repo.packs(line.id, product.id, from, to);
    const unit = product.unit;
    const toKg = unit === 'g' ? 1 / 1000 : 1;
    const overallMean = packs.length ? mean(packs) : null;
    const overallSd = sampleSd(packs);

    // the within-subgroup σ in force: approved limits, else the product's σ, else estimated from the range
    const version = repos.limits.latest(line.id, product.id);
    const estimated = checks.length >= 2 && checks.some((c) => c.n >= 2) ? estimateSigma(checks, defaultSigmaMethod(product.subgroupSize)) : null;
    const within = version
      ? { sigma: version.sigma, source: `approved limits (version ${version.id}, ${version.method})` }
      : product.sigma !== null
        ? { sigma: product.sigma, source: "the product's configured σ" }
        : estimated
          ? { sigma: estimated.sigma, source: `estimated from this range (${estimated.method})` }
          : null;

    const lsl = product.lsl ?? product.t1;
    const usl = product.usl;
    let capabilityResult: CapabilityView;
    const unstable = unstableAt(lineAlerts, to);
    if (checks.length < MIN_CAPABILITY_CHECKS) {
      capabilityResult = { refused: `only ${checks.length} checks in the range; at least ${MIN_CAPABILITY_CHECKS} are needed for an index that means something` };
    } else if (unstable.length > 0) {
      capabilityResult = { refused: `the process was not stable: ${unstable.length} act-level alert${unstable.length > 1 ? 's were' : ' was'} still open at the end of the range (alert ${unstable.map((a) => a.id).join(', ')}); an index from an unstable process means nothing` };
    } else if (lsl === null || overallMean === null || overallSd === null || !within) {
      capabilityResult = { refused: 'no specification limit (and no T1) or no spread to judge against' };
    } else {
      const df = checks.reduce((acc, c) => acc + Math.max(0, c.n - 1), 0);
      capabilityResult = {
        lsl,
        usl,
        within: { sigma: within.sigma, source: within.source, ...capability(overallMean, within.sigma, packs.length, df, lsl, usl) },
        overall: { sigma: overallSd, ...capability(overallMean, overallSd, packs.length, packs.length - 1, lsl, usl) },
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
      },
      points: checks.map((c: CheckMoments) => ({ checkId: c.id, at: new Date(c.takenAt).toISOString(), mean: c.mean, n: c.n, sd: c.sd, range: c.range })),
      limits: within ? { centre: version?.centre ?? product.target, sigma: within.sigma } : null,
    };
  }

  function lineSection(line: Line, from: number, to: number): LineSection {
    const alerts = repos.alerts.overlapping(line.id, from, to);
    const inRange = alerts.filter((a) => a.openedAt >= from && a.openedAt < to);
    const productIds = repo.productsIn(line.id, from, to);
    const products = productIds.map((id) => repos.products.get(id)).filter((p): p is Product => p !== null);
    const sections = products.map((p) => productSection(line, p, from, to, alerts));
    let due = 0;
    for (const p of products) due += Math.floor(minutesRunning(ctx, line.id, p.id, from, to) / p.samplingMinutes);
    const taken = sections.reduce((acc, s) => acc + s.checks, 0);
    const days = Math.max((Math.min(to, ctx.clock.now()) - from) / DAY, 1 / 24);
    const shiftAlerts = inRange.filter((a) => a.kind === 'mean-shift' || a.kind === 'spread-up');
    let predicted = 0;
    for (const [i, p] of products.entries()) {
      const figure = falseAlarmFigure(resolveRuleSet(p.rules), p.subgroupSize, p.samplingMinutes);
      predicted += (sections[i]?.checks ?? 0) / figure.arlChecks;
    }
    const events = inRange.map((a) => ({
      ...alertViewFrom(repos.alerts, a),
      minutesToAcknowledge: a.acknowledgedAt === null ? null : (a.acknowledgedAt - a.openedAt) / MINUTE,
      minutesToResolve: a.resolvedAt === null ? null : (a.resolvedAt - a.openedAt) / MINUTE,
    }));
    return {
      line: { id: line.id, code: line.code, name: line.name, packsPerHour: line.packsPerHour },
      sampling: { checksTaken: taken, checksDue: due, kept: taken >= due },
      events,
      medianMinutesToAcknowledge: median(events.flatMap((e) => (e.minutesToAcknowledge === null ? [] : [e.minutesToAcknowledge]))),
      medianMinutesToResolve: median(events.flatMap((e) => (e.minutesToResolve === null ? [] : [e.minutesToResolve]))),
      alertLoad: {
        days,
        shiftAlerts: shiftAlerts.length,
        perDay: shiftAlerts.length / days,
        predictedFalseAlarmsPerDay: predicted / days,
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
