import { describe, expect } from 'vitest';
import { simulateArl } from '../../server/stats/false-alarm.js';
import { resolveRuleSet } from '../../server/stats/rule-set.js';
import { heftTest, type TestApp } from '../helpers.js';

/** The set-up form's false-alarm interval for a rule choice not yet saved (issue 12). */
const ask = (t: TestApp, body: Record<string, unknown>) => t.app.inject({ method: 'POST', url: '/api/products/false-alarm', headers: { cookie: t.cookies.quality }, payload: body });

/** Asks until the answer is ready, letting the server run its slices in between (each ask is an event-loop turn). */
async function untilReady(t: TestApp, body: Record<string, unknown>) {
  for (;;) {
    const res = await ask(t, body);
    if (res.statusCode === 200) return res.json().falseAlarm;
    expect(res.statusCode).toBe(202);
    await new Promise((r) => setImmediate(r));
  }
}

describe('false-alarm interval of a rule choice', () => {
  heftTest('when a rule set not yet simulated is asked for, then the first answer says it is working, and the last gives the same ARL as the simulation run in one go', async ({ heft: t }) => {
    // only the 3σ rule at n = 4: no other test asks for this set, so nothing is cached yet
    const rules = { rules: { 'two-of-three-beyond-2-sigma': { enabled: false }, 'four-of-five-beyond-1-sigma': { enabled: false }, 'run-one-side': { enabled: false }, 'ewma-shift': { enabled: false }, 'cusum-shift': { enabled: false }, 'spread-up': { enabled: false } } };
    const body = { rules, subgroupSize: 4, samplingMinutes: 30 };
    const first = await ask(t, body);
    expect(first.statusCode).toBe(202);
    expect(first.json().falseAlarm).toMatchObject({ state: 'working', runs: 2000, figure: null });
    const ready = await untilReady(t, body);
    const inOneGo = simulateArl(resolveRuleSet(rules), { seed: 20_261_201, runs: 2000, maxLength: 100_000, subgroupSize: 4 });
    expect(ready.figure.arlChecks).toBe(inOneGo.arl);
    // the 3σ rule alone: ARL₀ = 1/0.0027 ≈ 370 checks (Montgomery, Introduction to SQC, §5.3.3); the simulation's own error allowed
    expect(Math.abs(ready.figure.arlChecks - 370.4)).toBeLessThan(4 * ready.figure.standardError);
    expect(ready.figure.intervalMinutes).toBeCloseTo(ready.figure.arlChecks * 30, 6);
    // asked again: cached, ready at once
    expect((await ask(t, body)).statusCode).toBe(200);
  });

  heftTest('when one more rule is switched on, then the interval is shorter', async ({ heft: t }) => {
    const base = { 'four-of-five-beyond-1-sigma': { enabled: false }, 'run-one-side': { enabled: false }, 'ewma-shift': { enabled: false }, 'cusum-shift': { enabled: false } };
    const without = await untilReady(t, { rules: { rules: { ...base, 'two-of-three-beyond-2-sigma': { enabled: false } } }, subgroupSize: 3, samplingMinutes: 60 });
    const withIt = await untilReady(t, { rules: { rules: base }, subgroupSize: 3, samplingMinutes: 60 });
    // shorter by more than three standard errors of the difference (the two simulations share a seed)
    const noise = Math.hypot(withIt.figure.standardError, without.figure.standardError);
    expect(withIt.figure.arlChecks).toBeLessThan(without.figure.arlChecks - 3 * noise);
  });

  heftTest('when the choice names an unknown rule or a bad λ, then 400 names the field', async ({ heft: t }) => {
    const unknown = await ask(t, { rules: { rules: { 'no-such-rule': { enabled: true } } }, subgroupSize: 5, samplingMinutes: 60 });
    expect(unknown.statusCode).toBe(400);
    expect(unknown.json().issues[0].field).toMatch(/^rules\.rules/);
    const lambda = await ask(t, { rules: { ewma: { lambda: 2 } }, subgroupSize: 5, samplingMinutes: 60 });
    expect([lambda.statusCode, lambda.json().issues[0].field]).toEqual([400, 'rules.ewma.lambda']);
    const operator = await t.app.inject({ method: 'POST', url: '/api/products/false-alarm', headers: { cookie: t.cookies.operator }, payload: { subgroupSize: 5, samplingMinutes: 60 } });
    expect(operator.statusCode).toBe(403);
  });
});
