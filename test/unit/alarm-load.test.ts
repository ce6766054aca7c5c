import { describe, expect, it } from 'vitest';
import { alarmLoad, type LoadAlert } from '../../server/stats/alarm-load.js';

const T0 = Date.parse('2026-03-02T00:00:00Z');
const MIN = 60_000;
const alert = (minute: number, extra: Partial<LoadAlert> = {}): LoadAlert => ({ openedAt: T0 + minute * MIN, acknowledgedAt: null, resolvedAt: null, severity: 'watch', rules: ['run-one-side'], ...extra });

describe('alarm load', () => {
  it('when 12 alerts open within ten minutes of one day, then that window is a flood and the day has 144 windows', () => {
    // EEMUA 191: a flood is more than 10 new alarms in 10 minutes (from memory); a day has 144 such windows
    const alerts = [...Array.from({ length: 12 }, (_, i) => alert(60 + i / 2)), alert(300), alert(301)];
    const load = alarmLoad(alerts, T0, T0 + 1440 * MIN);
    expect([load.alerts, load.alertsPerDay, load.busiest10Minutes]).toEqual([14, 14, 12]);
    expect(load.floodShare).toBeCloseTo(1 / 144, 12);
    expect(load.per10Minutes).toBeCloseTo(14 / 144, 12);
  });

  it('when exactly 10 alerts share a window, then it is no flood', () => {
    expect(alarmLoad(Array.from({ length: 10 }, (_, i) => alert(i / 2)), T0, T0 + 60 * MIN).floodShare).toBe(0);
  });

  it('when alerts stand open, are acknowledged and resolved, then standing ones, medians by severity and the frequent rule sets are counted', () => {
    const alerts = [
      alert(0, { severity: 'act', rules: ['beyond-3-sigma', 'cusum-shift'], acknowledgedAt: T0 + 4 * MIN, resolvedAt: T0 + 30 * MIN }),
      alert(10, { severity: 'act', rules: ['cusum-shift', 'beyond-3-sigma'], acknowledgedAt: T0 + 20 * MIN, resolvedAt: T0 + 70 * MIN }),
      alert(20, { severity: 'act', rules: ['beyond-3-sigma'], acknowledgedAt: T0 + 26 * MIN, resolvedAt: T0 + 26 * 60 * MIN }),
      alert(30), // never resolved: standing at the end of two days
    ];
    const load = alarmLoad(alerts, T0, T0 + 2 * 1440 * MIN);
    expect(load.standingOver24h).toBe(2); // resolved after 25.7 h, and the one still open
    expect(load.topRuleCombinations).toEqual([
      { rules: ['beyond-3-sigma', 'cusum-shift'], alerts: 2 },
      { rules: ['beyond-3-sigma'], alerts: 1 },
      { rules: ['run-one-side'], alerts: 1 },
    ]);
    const act = load.bySeverity.find((s) => s.severity === 'act');
    expect([act?.alerts, act?.medianMinutesToAcknowledge, act?.medianMinutesToResolve]).toEqual([3, 6, 60]);
    const watch = load.bySeverity.find((s) => s.severity === 'watch');
    expect([watch?.alerts, watch?.medianMinutesToAcknowledge]).toEqual([1, null]);
  });
});
