import type { AlertRepository, StoredAlert, StoredSignal } from '../alerts/repository.js';
import type { CheckRepository, NewCheck } from '../checks/repository.js';
import type { CheckParts } from '../live/repository.js';
import { toIso } from '../clock.js';
import { inferFromMoments, type Inference } from '../stats/sample-summary.js';
import { RULE_CATALOGUE } from '../stats/rules.js';
import { SIGNALS_IN_VIEW, type AlertSummary, type AlertView, type CheckSignalView, type SignalView } from '../alerts/contract.js';
import type { CheckView } from '../checks/contract.js';

/** The JSON shapes the API and the live feed answer with (API.md). */

/**
 * A check as the API shows it. `row` is where the stored row's id and correction come from: a stored
 * check itself, or for a check just written its new id beside it (not spread into a copy of it, which
 * measured some 4 % of a check's engine time). `inferred` is the check step's own inference, so a new
 * check's t and p are not worked out twice.
 */
export function checkView(c: NewCheck, row: { id: number; supersededBy: number | null }, inferred?: { own: Inference; window: Inference }): CheckView {
  const own = inferred?.own ?? inferFromMoments(c.n, c.mean, c.sd, c.target);
  const windowed = inferred?.window ?? inferFromMoments(c.windowN, c.windowMean, c.windowSd, c.target);
  return {
    id: row.id,
    lineId: c.lineId,
    productId: c.productId,
    runId: c.runId,
    clientId: c.clientId,
    takenAt: toIso(c.takenAt),
    recordedAt: toIso(c.recordedAt),
    basis: c.basis,
    weights: c.weights,
    grossWeights: c.grossWeights,
    n: c.n,
    mean: c.mean,
    sd: c.sd,
    range: c.range,
    se: own.se,
    t: own.t,
    df: own.df,
    p: own.p,
    ci95: own.ci95,
    unavailable: own.unavailable,
    target: c.target,
    belowT1: c.belowT1,
    belowT2: c.belowT2,
    revision: c.revision,
    revisesCheckId: c.revisesCheckId,
    supersededBy: row.supersededBy,
    revisionReason: c.revisionReason,
    enteredBy: c.enteredBy,
    source: c.source,
    note: c.note,
    limitsVersionId: c.limitsVersionId,
    window: {
      checks: c.windowChecks,
      n: c.windowN,
      mean: c.windowMean,
      sd: c.windowSd,
      se: windowed.se,
      t: windowed.t,
      df: windowed.df,
      p: windowed.p,
      ci95: windowed.ci95,
      unavailable: windowed.unavailable,
    },
  };
}

const WORDS = new Map<string, string>([...RULE_CATALOGUE.map((r) => [r.id, r.words] as const), ['check-overdue', 'check overdue']]);

/** The words a screen shows for a rule id. */
export function ruleWords(rule: string): string {
  return WORDS.get(rule) ?? rule;
}

export function signalView(s: StoredSignal): SignalView {
  return {
    rule: s.rule,
    words: ruleWords(s.rule),
    severity: s.severity,
    checkId: s.checkId,
    at: toIso(s.at),
    direction: s.direction,
    size: s.size,
    onsetCheckId: s.onsetCheckId,
  };
}

/**
 * A check's signals as its answer gives them: grouped by the alert each joined, with the size once
 * per group (every signal of one kind on one check has the same size) and per rule only what
 * differs. The check and its time are the answer's own; the words are the alert summary's.
 */
export function checkSignalView(signals: readonly StoredSignal[]): CheckSignalView[] {
  const groups = new Map<number, CheckSignalView>();
  for (const s of signals) {
    let group = groups.get(s.alertId);
    if (!group) {
      group = { alertId: s.alertId, direction: s.direction, size: s.size, rules: [] };
      groups.set(s.alertId, group);
    }
    group.rules.push({ rule: s.rule, severity: s.severity, onsetCheckId: s.onsetCheckId });
  }
  return [...groups.values()];
}

/**
 * What a check's answer and its live messages say of each alert it touched: no signal history and no
 * free text, so its size does not grow with the alert. The full view is on GET /api/alerts/:id.
 */
export function alertSummary(a: StoredAlert): AlertSummary {
  return {
    id: a.id,
    lineId: a.lineId,
    runId: a.runId,
    kind: a.kind,
    direction: a.direction,
    severity: a.severity,
    state: a.state,
    rules: a.rules as AlertSummary['rules'],
    ruleWords: a.rules.map(ruleWords),
    signalCount: a.signalCount,
    openedAt: toIso(a.openedAt),
    updatedAt: toIso(a.updatedAt),
    onset: { at: toIso(a.onsetAt), checkId: a.onsetCheckId },
    changePoint: a.changePointCheckId === null ? null : { at: toIso(a.changePointAt), checkId: a.changePointCheckId },
    size: a.size,
    latestCheckId: a.latestCheckId,
  };
}

/** An alert in full: the summary, who saw to it and why, and a page of its signals. */
export function alertView(a: StoredAlert, signals: readonly StoredSignal[], told: readonly { rule: string; channel: 'email' | 'webhook'; at: number }[] = []): AlertView {
  return {
    ...alertSummary(a),
    signals: signals.map(signalView),
    acknowledged: a.acknowledgedAt === null ? null : { by: a.acknowledgedBy, at: toIso(a.acknowledgedAt), note: a.acknowledgeNote },
    resolved: a.resolvedAt === null ? null : { by: a.resolvedBy, at: toIso(a.resolvedAt), cause: a.cause, action: a.action },
    shelved: a.shelvedUntil === null ? null : { until: toIso(a.shelvedUntil), by: a.shelvedBy, reason: a.shelveReason, times: a.shelveCount },
    told: told.map((t) => ({ rule: t.rule, channel: t.channel, at: toIso(t.at) })),
  };
}

/** An alert's full view with its latest signals read from storage. */
export function alertViewFrom(alerts: AlertRepository, a: StoredAlert): AlertView {
  return alertView(a, alerts.signalPage(a.id, null, SIGNALS_IN_VIEW), alerts.told(a.id));
}

/** A check's live message parts as they were sent, read back for a replay: the check as entered (not yet corrected) and its own signals. */
export function checkMessageParts(checks: CheckRepository, alerts: AlertRepository): CheckParts {
  return (checkId) => {
    const check = checks.get(checkId);
    return check ? { check: checkView(check, { id: checkId, supersededBy: null }), signals: checkSignalView(alerts.signalsOfCheck(checkId)) } : null;
  };
}
