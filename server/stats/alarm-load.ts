/** One alert as the alarm-load figures see it. */
export interface LoadAlert {
  openedAt: number;
  acknowledgedAt: number | null;
  resolvedAt: number | null;
  severity: 'watch' | 'act';
  rules: readonly string[];
}

export interface AlarmLoad {
  alerts: number;
  alertsPerDay: number;
  /** Mean new alerts per 10-minute window, and the most in any one. */
  per10Minutes: number;
  busiest10Minutes: number;
  /** Share of 10-minute windows with more than 10 new alerts. */
  floodShare: number;
  /** Alerts that stood unresolved for more than 24 h (by the range's end). */
  standingOver24h: number;
  /** The ten most frequent rule combinations, most frequent first. */
  topRuleCombinations: { rules: string[]; alerts: number }[];
  bySeverity: { severity: 'watch' | 'act'; alerts: number; medianMinutesToAcknowledge: number | null; medianMinutesToResolve: number | null }[];
}

const WINDOW = 10 * 60_000;
const FLOOD = 10;

/** The middle value (the mean of the two middle ones for an even count); null for none. */
export function median(values: number[]): number | null {
  if (values.length === 0) return null;
  const s = [...values].sort((a, b) => a - b);
  const mid = Math.floor(s.length / 2);
  return s.length % 2 ? (s[mid] as number) : ((s[mid - 1] as number) + (s[mid] as number)) / 2;
}

/**
 * Alarm-system performance figures in the manner of EEMUA Publication 191 and ANSI/ISA-18.2 §16
 * (monitoring and assessment): alerts per day and per 10-minute window, the share of 10-minute windows
 * in flood (more than 10 new alarms), standing alarms older than 24 h, the most frequent alarms, and
 * the times to acknowledge and to resolve (from memory of the figures' definitions).
 */
export function alarmLoad(alerts: readonly LoadAlert[], from: number, to: number): AlarmLoad {
  const span = Math.max(to - from, WINDOW);
  const windows = Math.ceil(span / WINDOW);
  const counts = new Map<number, number>();
  for (const a of alerts) {
    const w = Math.floor((a.openedAt - from) / WINDOW);
    counts.set(w, (counts.get(w) ?? 0) + 1);
  }
  const combos = new Map<string, { rules: string[]; alerts: number }>();
  for (const a of alerts) {
    const rules = [...a.rules].sort();
    const key = rules.join('+');
    const entry = combos.get(key) ?? { rules, alerts: 0 };
    entry.alerts += 1;
    combos.set(key, entry);
  }
  const severities: ('act' | 'watch')[] = ['act', 'watch'];
  return {
    alerts: alerts.length,
    alertsPerDay: alerts.length / (span / 86_400_000),
    per10Minutes: alerts.length / windows,
    busiest10Minutes: Math.max(0, ...counts.values()),
    floodShare: [...counts.values()].filter((n) => n > FLOOD).length / windows,
    standingOver24h: alerts.filter((a) => (a.resolvedAt ?? to) - a.openedAt > 86_400_000).length,
    topRuleCombinations: [...combos.values()].sort((a, b) => b.alerts - a.alerts || a.rules.join().localeCompare(b.rules.join())).slice(0, 10),
    bySeverity: severities.map((severity) => {
      const of = alerts.filter((a) => a.severity === severity);
      return {
        severity,
        alerts: of.length,
        medianMinutesToAcknowledge: median(of.flatMap((a) => (a.acknowledgedAt === null ? [] : [(a.acknowledgedAt - a.openedAt) / 60_000]))),
        medianMinutesToResolve: median(of.flatMap((a) => (a.resolvedAt === null ? [] : [(a.resolvedAt - a.openedAt) / 60_000]))),
      };
    }),
  };
}
