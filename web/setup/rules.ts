import type { z } from 'zod';
import type { rulesAnswer } from '../../server/health/contract.js';
import type { falseAlarmAnswer, ruleOverrides } from '../../server/products/contract.js';
import { api, ApiError } from '../shared/api.js';
import { el } from '../shared/format.js';

/*
 * The product form's rule choice: each rule on or off with its severity, the run length, EWMA λ and
 * L, CUSUM k and h; and the expected false-alarm interval of the chosen set at the product's check
 * size and interval, recomputed as the choice changes (the server simulates it between its other
 * work; the page asks again while it runs and says how far it has got).
 */

type Overrides = z.output<typeof ruleOverrides>;
type ChoosableId = keyof NonNullable<Overrides['rules']>;
type Catalogue = z.output<typeof rulesAnswer>;
/** A rule a product can choose (check overdue is the sampling clock's, not a product's). */
type RuleDescription = Catalogue['rules'][number] & { id: ChoosableId };
type FalseAlarm = z.output<typeof falseAlarmAnswer>['falseAlarm'];

const $ = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;
const NUMBER_IDS = ['lambda', 'L', 'k', 'h'] as const;

let catalogue: RuleDescription[] = [];
/** The run length and detector design a product gets unless it says otherwise, as the server keeps them. */
let defaults = { runLength: 9, lambda: 0, L: 0, k: 0, h: 0 };

/** Fetches the rule catalogue and draws one row per rule into the form's rule fieldset. */
export async function setUpRuleChoice(): Promise<void> {
  const answer = await api<Catalogue>('GET', '/api/rules');
  catalogue = answer.rules.filter((r): r is RuleDescription => r.id !== 'check-overdue');
  const d = answer.defaults;
  defaults = { runLength: d.runLength, lambda: d.ewma.lambda, L: d.ewma.L, k: d.cusum.k, h: d.cusum.h };
  $('rule-rows').replaceChildren(
    ...catalogue.map((r) =>
      el(
        'div',
        { class: 'rule-row', 'data-rule': r.id },
        el('label', {}, el('input', { type: 'checkbox', id: `rc-${r.id}` }), ` ${r.words}`),
        el('label', { for: `rc-${r.id}-severity`, class: 'muted' }, 'severity'),
        el('select', { id: `rc-${r.id}-severity`, 'aria-label': `Severity of ${r.words}` }, el('option', { value: 'act' }, 'act'), el('option', { value: 'watch' }, 'watch')),
      ),
    ),
  );
}

/** Puts a product's stored choice (only its departures from the defaults) into the fields. */
export function showRuleChoice(o: Overrides | null): void {
  for (const r of catalogue) {
    $<HTMLInputElement>(`rc-${r.id}`).checked = o?.rules?.[r.id]?.enabled ?? r.defaultEnabled;
    $<HTMLSelectElement>(`rc-${r.id}-severity`).value = o?.rules?.[r.id]?.severity ?? r.defaultSeverity;
  }
  $<HTMLSelectElement>('rc-runLength').value = String(o?.runLength ?? defaults.runLength);
  $<HTMLInputElement>('rc-lambda').value = String(o?.ewma?.lambda ?? defaults.lambda);
  $<HTMLInputElement>('rc-L').value = String(o?.ewma?.L ?? defaults.L);
  $<HTMLInputElement>('rc-k').value = String(o?.cusum?.k ?? defaults.k);
  $<HTMLInputElement>('rc-h').value = String(o?.cusum?.h ?? defaults.h);
}

const numberIn = (id: string): number | string => {
  const raw = $<HTMLInputElement>(`rc-${id}`).value.trim().replace(',', '.');
  return raw !== '' && Number.isFinite(Number(raw)) ? Number(raw) : raw;
};

/** The choice as the API stores it: only what differs from the defaults, so a product follows them otherwise. */
export function ruleChoice(): Overrides {
  const rules: NonNullable<Overrides['rules']> = {};
  for (const r of catalogue) {
    const enabled = $<HTMLInputElement>(`rc-${r.id}`).checked;
    const severity = $<HTMLSelectElement>(`rc-${r.id}-severity`).value as 'act' | 'watch';
    const o: { enabled?: boolean; severity?: 'act' | 'watch' } = {};
    if (enabled !== r.defaultEnabled) o.enabled = enabled;
    if (severity !== r.defaultSeverity) o.severity = severity;
    if (Object.keys(o).length > 0) rules[r.id] = o;
  }
  const [lambda, L, k, h] = NUMBER_IDS.map(numberIn);
  const runLength = Number($<HTMLSelectElement>('rc-runLength').value) as 8 | 9;
  const choice: Record<string, unknown> = {};
  if (Object.keys(rules).length > 0) choice.rules = rules;
  if (runLength !== defaults.runLength) choice.runLength = runLength;
  const ewma = { ...(lambda !== defaults.lambda ? { lambda } : {}), ...(L !== defaults.L ? { L } : {}) };
  const cusum = { ...(k !== defaults.k ? { k } : {}), ...(h !== defaults.h ? { h } : {}) };
  if (Object.keys(ewma).length > 0) choice.ewma = ewma;
  if (Object.keys(cusum).length > 0) choice.cusum = cusum;
  // a field that does not read as a number goes to the server as typed, which names it
  return choice as Overrides;
}

let asked = 0;
let retry = 0;

/** Asks for the interval of the choice now in the form; while the server works it out, says so and asks again. */
export async function refreshFalseAlarm(subgroupSize: unknown, samplingMinutes: unknown): Promise<void> {
  const mine = ++asked;
  window.clearTimeout(retry);
  const box = $('false-alarm');
  if (typeof subgroupSize !== 'number' || typeof samplingMinutes !== 'number') {
    box.textContent = 'The false-alarm interval needs the packs per check and the minutes between checks.';
    return;
  }
  try {
    const res = await api<{ falseAlarm: FalseAlarm }>('POST', '/api/products/false-alarm', { rules: ruleChoice(), subgroupSize, samplingMinutes });
    if (mine !== asked) return; // the choice changed meanwhile
    const fa = res.falseAlarm;
    if (fa.state !== 'ready' || !fa.figure) {
      box.textContent = fa.state === 'busy' ? 'Working out the false-alarm interval: the server is busy with others, trying again…' : `Working out the false-alarm interval… ${Math.round((100 * fa.runsDone) / fa.runs)} % of ${fa.runs} simulated runs`;
      retry = window.setTimeout(() => void refreshFalseAlarm(subgroupSize, samplingMinutes), 300);
      return;
    }
    const hours = fa.figure.intervalMinutes / 60;
    box.textContent = `Expected false-alarm interval of the chosen rules: one every ${fa.figure.arlChecks.toFixed(0)} checks (± ${fa.figure.standardError.toFixed(0)}), that is ${hours.toFixed(0)} hours or ${(hours / 24).toFixed(1)} days at ${samplingMinutes} min between checks — ${fa.figure.words}. Pack below T2 is not counted: it is never a false alarm.`;
  } catch (err) {
    if (mine !== asked) return;
    const issue = err instanceof ApiError ? err.body?.issues?.[0] : undefined;
    box.textContent = issue ? `The rule choice does not read: ${issue.field.replace(/^rules\./, '')}: ${issue.message}` : 'The false-alarm interval could not be worked out.';
  }
}
