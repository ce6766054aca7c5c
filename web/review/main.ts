import '../shared/base.css';
import './review.css';
import { api, ApiError, getPlant, signIn, whoAmI, type Line, type Plant } from '../shared/api.js';
import { meanChart, meanChartData, type ChartPoint } from '../shared/charts.js';
import { alertTitle, dateTime, el, STOP_REASON_WORDS } from '../shared/format.js';
import type { LineSection, ProductSection, Review } from '../../server/review/contract.js';

const $ = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;

/** A capability index with its 95 % interval. */
type Index = Extract<ProductSection['capability'], { within: unknown }>['within']['cpk'];

let plant: Plant = { name: 'Heft', timeZone: 'UTC' };
let allLines: Line[] = [];

const fmt = (v: number | null | undefined, d = 2) => (v === null || v === undefined || !Number.isFinite(v) ? '—' : v.toFixed(d));
const decimals = (unit: 'g' | 'kg') => (unit === 'kg' ? 4 : 2);
const minutes = (m: number | null) => (m === null ? '—' : m < 90 ? `${Math.round(m)} min` : `${(m / 60).toFixed(1)} h`);
const mark = (ok: boolean | null) => (ok === null ? el('span', { class: 'refused' }, 'not judged') : el('span', { class: ok ? 'meets' : 'fails' }, ok ? '✓ meets' : '✕ does not meet'));

function problem(text: string | null): void {
  $('problem').textContent = text ?? '';
  $('problem').classList.toggle('hidden', !text);
}

/** YYYY-MM-DD of an instant in the plant's zone. */
function localDate(iso: string): string {
  const p = Object.fromEntries(new Intl.DateTimeFormat('en-GB', { timeZone: plant.timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).formatToParts(new Date(iso)).map((x) => [x.type, x.value]));
  return `${p.year}-${p.month}-${p.day}`;
}

function table(head: string[], rows: (string | Node)[][], numeric: number[] = []): HTMLTableElement {
  return el(
    'table',
    {},
    el('thead', {}, el('tr', {}, ...head.map((h) => el('th', { scope: 'col' }, h)))),
    el('tbody', {}, ...rows.map((r) => el('tr', {}, ...r.map((c, i) => el('td', numeric.includes(i) ? { class: 'num' } : {}, c))))),
  );
}

const pct = (x: number) => `${(100 * x).toFixed(x > 0.999 ? 2 : 1)} %`;

function fact(label: string, value: string | Node): HTMLElement {
  return el('div', { class: 'fact' }, el('div', { class: 'label' }, label), el('div', { class: 'value' }, value));
}

function indexCell(i: Index | null | undefined, reason?: string): string {
  if (!i) return reason ? `— (${reason})` : '—';
  return `${i.value.toFixed(2)} (95 % CI ${i.ci95[0].toFixed(2)}–${i.ci95[1].toFixed(2)})`;
}

/** How the 95 % intervals were found, for the words under the capability table. */
function intervalWords(cap: Extract<ProductSection['capability'], { within: unknown }>): string {
  const within =
    cap.within.degreesOfFreedom === null
      ? `Check to check: ${cap.within.interval}, so Cp has no interval and Cpk's is the mean's only.`
      : `Check to check: ${cap.within.interval}; chi-square on ν for Cp, the delta method (Bissell 1990's form) for Cpk.`;
  return `95 % intervals. ${within} All packs together: ${cap.overall.interval}.`;
}

function renderProduct(section: LineSection, p: ProductSection): HTMLElement {
  const u = p.product.unit;
  const d = decimals(u);
  const box = el('div', { class: 'product-report' }, el('h3', {}, `${p.product.code} — ${p.product.name}`));
  const st = p.settings;
  box.append(
    el(
      'p',
      { class: 'muted settings-used' },
      `${dateTime(st.from, plant.timeZone)} to ${dateTime(st.to, plant.timeZone)}, judged by product settings v${st.productVersion} (in force since ${dateTime(st.productVersionFrom, plant.timeZone)})` +
        (st.limitsVersion === null ? ' and no approved limits.' : ` and approved limits v${st.limitsVersion}.`),
    ),
  );
  box.append(
    el(
      'div',
      { class: 'facts' },
      fact('Checks and packs', `${p.checks} checks, ${p.packs} packs`),
      fact('Mean of all packs', p.mean === null ? '—' : `${p.mean.toFixed(d)} ${u} (target ${p.product.target} ${u})`),
      fact('Overall sd', p.sd === null ? '—' : `${p.sd.toFixed(d)} ${u}`),
    ),
  );
  if (p.limits && p.points.length > 0) {
    const chartBox = el('div', { class: 'chart-box' }, el('div', { class: 'muted' }, 'Mean of each check with its limits (±3σ/√n, solid) and its ±1σ and ±2σ zones (shaded); ◇ marks a check that signalled'));
    box.append(chartBox);
    const points: ChartPoint[] = p.points.map((x) => ({ checkId: x.checkId, at: Date.parse(x.at) / 1000, mean: x.mean, n: x.n, sd: x.sd, range: x.range }));
    const signalled = new Set(section.events.flatMap((e) => e.signals.map((s) => s.checkId ?? -1)));
    requestAnimationFrame(() => meanChart(chartBox, Math.min(1000, Math.max(480, chartBox.clientWidth - 16)), 220, meanChartData(points, p.limits!.centre, p.limits!.sigma, signalled)));
  }
  const cap = p.capability;
  // prepackages often have no lower specification limit: the index is then taken against T1
  const vsT1 = p.product.lsl === null;
  box.append(el('h4', {}, 'Capability'));
  if ('refused' in cap) box.append(el('p', { class: 'refused' }, `Not computed: ${cap.refused}.`));
  else
    box.append(
      table(
        ['', 'σ', 'Cp / Pp', vsT1 ? 'Cpk / Ppk vs T1' : 'Cpk / Ppk'],
        [
          [`Check to check (σ in force: ${cap.within.source})`, `${fmt(cap.within.sigma, d)} ${u}${cap.within.degreesOfFreedom === null ? ', known' : `, ν ≈ ${cap.within.degreesOfFreedom.toFixed(0)}`}`, indexCell(cap.within.cp, cap.within.unavailable.cp), indexCell(cap.within.cpk)],
          ['All packs together', `${fmt(cap.overall.sigma, d)} ${u}`, indexCell(cap.overall.cp, cap.overall.unavailable.cp), indexCell(cap.overall.cpk)],
        ],
      ),
      el(
        'p',
        { class: 'muted' },
        vsT1
          ? `No lower specification limit is set for this product, so Cpk is taken against T1 (${cap.lsl} ${u})${cap.usl ? ` and the upper limit of ${cap.usl} ${u}` : ''}. ` +
              'Cpk = 1 against T1 means about 0.135 % of packs below T1, far stricter than the average system, which allows about 2.5 % below T1 (Cpk ≈ 0.65). ' +
              intervalWords(cap)
          : `Against a lower limit of ${cap.lsl} ${u}${cap.usl ? ` and an upper limit of ${cap.usl} ${u}` : ''}. ${intervalWords(cap)}`,
      ),
    );
  const nq = p.netQuantity;
  box.append(el('h4', {}, 'Net quantity (average system)'));
  if (nq && p.product.t1 !== null && p.product.t2 !== null) {
    box.append(
      table(
        ['Rule', 'Figure', 'Position'],
        [
          [`Mean not below the nominal (${p.product.nominal} ${u})`, `${nq.mean.toFixed(d)} ${u}`, mark(nq.meetsMean)],
          [`Packs below T1 (${p.product.t1} ${u}) within 2.5 %, observed`, `${nq.belowT1} of ${nq.packs} (${(100 * nq.shareBelowT1).toFixed(2)} %)`, mark(nq.meetsT1)],
          ['… estimated from the fitted normal', nq.estimatedShareBelowT1 === null ? '—' : `${(100 * nq.estimatedShareBelowT1).toFixed(3)} %`, mark(nq.meetsT1Estimated)],
          [`No pack below T2 (${p.product.t2} ${u})`, `${nq.belowT2}`, mark(nq.meetsT2)],
        ],
      ),
      el('p', { class: 'caution' }, "An aid to the packer's own checks: the authority's reference test and the local regulations prevail."),
    );
  } else box.append(el('p', { class: 'muted' }, 'No TNE for this nominal, or no packs.'));
  const g = p.giveaway;
  const t = p.targetAdvice;
  box.append(el('h4', {}, 'Giveaway and target'));
  box.append(
    table(
      ['', 'Per pack', 'Over the range'],
      [
        ['Giveaway (mean − nominal)', g.perPack === null ? '—' : `${g.perPack.toFixed(d)} ${u} (${fmt(g.percentOfNominal)} % of nominal)`, g.cost === null ? (g.packsMade === null ? 'set the line’s packs per hour to see the cost' : 'set the product’s cost per kg to see the cost') : `${g.cost.toFixed(2)} (currency of the cost per kg), ${Math.round(g.packsMade ?? 0)} packs in ${g.hoursRunning.toFixed(1)} h`],
        [`Lowest target the σ of ${fmt(t.sigma, d)} ${u} allows`, t.lowestTarget === null ? '—' : `${t.lowestTarget.toFixed(d)} ${u}`, ''],
        ['Saving at that target', t.savingPerPack === null ? '—' : `${t.savingPerPack.toFixed(d)} ${u}`, t.saving === null ? '—' : t.saving.toFixed(2)],
        ...(t.referenceTest && t.lowestTarget !== null
          ? [
              [
                `Reference test at that target (${t.referenceTest.sampleSize} + ${t.referenceTest.sampleSize} packs, lot of ${t.referenceTest.lotSize === null ? 'an assumed 1,000' : Math.round(t.referenceTest.lotSize)} packs)`,
                `allowance ${t.referenceTest.factor.toFixed(3)}·s = ${t.referenceTest.allowance.toFixed(d)} ${u}`,
                `passes ${pct(t.referenceTest.passMean)} (mean), ${pct(t.referenceTest.passCount)} (packs below T1)`,
              ],
            ]
          : []),
      ],
    ),
    el('p', { class: 'muted' }, `Lowest target: ${t.rule}.`),
    ...(t.referenceTest
      ? [
          el(
            'p',
            { class: 'muted' },
            `The inspector's reference test judges a sample's mean, not the true one: it passes while the sample mean is no more than ${t.referenceTest.factor.toFixed(3)}·s (t₀.₉₉₅/√n) below the nominal, ` +
              `so a lot whose mean sits exactly at the nominal passes 99.5 % of the time. The figures above are that test's chances at the lowest target; aim higher where they are too low for you.`,
          ),
        ]
      : []),
    el('p', { class: 'caution' }, "An aid to the packer's own checks: the authority's reference test and the local regulations prevail."),
  );
  return box;
}

function renderLine(s: LineSection): HTMLElement {
  const box = el('section', { class: 'line-report', 'data-line': String(s.line.id) }, el('h2', {}, `${s.line.code} — ${s.line.name}`));
  box.append(
    el(
      'div',
      { class: 'facts' },
      fact(
        'Running and stopped',
        `${s.running.hoursRunning.toFixed(1)} h running, ${s.running.hoursStopped.toFixed(1)} h stopped` +
          (s.running.stopped.length ? ` (${s.running.stopped.map((x) => `${STOP_REASON_WORDS[x.reason] ?? x.reason} ${x.hours.toFixed(1)} h`).join(', ')})` : ''),
      ),
      fact('Sampling plan', el('span', {}, `${s.sampling.checksTaken} checks taken of ${s.sampling.checksDue} due `, mark(s.sampling.kept))),
      fact('Median time to acknowledge', minutes(s.medianMinutesToAcknowledge)),
      fact('Median time to resolve', minutes(s.medianMinutesToResolve)),
      fact('Shift alerts per day', `${s.alertLoad.perDay.toFixed(2)} (false alarms expected: ${s.alertLoad.predictedFalseAlarmsPerDay.toFixed(2)})`),
    ),
  );
  const load = s.alertLoad;
  box.append(
    el('h3', {}, 'Alarm load'),
    table(
      ['Figure', 'Value'],
      [
        ['Alerts (all kinds)', `${load.alerts} (${load.alertsPerDay.toFixed(1)} a day, ${load.per10Minutes.toFixed(3)} per 10 min; at most ${load.busiest10Minutes} in one 10 min)`],
        ['10-minute windows in flood (more than 10 new alerts)', `${(100 * load.floodShare).toFixed(2)} %`],
        ['Standing over 24 h', String(load.standingOver24h)],
        ['False alarms the rule set predicts for the hours running', load.predictedFalseAlarmsWhileRunning.toFixed(2)],
        ...load.bySeverity.map((x) => [`Time to acknowledge / resolve, ${x.severity} (${x.alerts})`, `${minutes(x.medianMinutesToAcknowledge)} / ${minutes(x.medianMinutesToResolve)} (medians)`]),
        ['Most frequent rule sets', load.topRuleCombinations.map((c) => `${c.rules.join(' + ')} (${c.alerts})`).join('; ') || '—'],
      ],
    ),
  );
  box.append(el('h3', {}, `Process-shift events (${s.events.length})`));
  if (s.events.length === 0) box.append(el('p', { class: 'muted' }, 'None in this range.'));
  else {
    const u = s.products[0]?.product.unit ?? 'g';
    box.append(
      table(
        ['Event', 'Rules', 'Estimated start', 'Detected', 'Acknowledged', 'Resolved', 'Size', 'Cause', 'Action', 'Who'],
        s.events.map((e) => [
          `${e.severity === 'act' ? '■' : '▲'} ${alertTitle(e.kind, e.direction)}${e.shelved ? ` (shelved ${e.shelved.times}× by ${e.shelved.by ?? '—'}: ${e.shelved.reason ?? ''})` : ''}`,
          e.ruleWords.join(', '),
          e.changePoint?.at ? dateTime(e.changePoint.at, plant.timeZone) : e.onset.at ? dateTime(e.onset.at, plant.timeZone) : '—',
          dateTime(e.openedAt, plant.timeZone),
          e.acknowledged ? `${dateTime(e.acknowledged.at, plant.timeZone)} (${minutes(e.minutesToAcknowledge)})` : '—',
          e.resolved ? `${dateTime(e.resolved.at, plant.timeZone)} (${minutes(e.minutesToResolve)})` : 'open',
          e.size ? `${e.size.unit > 0 ? '+' : ''}${e.size.unit.toFixed(decimals(u))} ${u}${e.size.sigma === null ? '' : ` (${e.size.sigma.toFixed(1)}σ)`}` : '—',
          e.resolved?.cause ?? '',
          e.resolved?.action ?? '',
          [e.acknowledged?.by, e.resolved?.by].filter(Boolean).join(' / '),
        ]),
      ),
    );
  }
  for (const p of s.products) box.append(renderProduct(s, p));
  return box;
}

function rangeQuery(): string {
  const picked = [...document.querySelectorAll<HTMLInputElement>('#line-picks input:checked')].map((i) => i.value);
  const lines = picked.length > 0 && picked.length < allLines.length ? `&lineIds=${picked.join(',')}` : '';
  return `fromDate=${$<HTMLInputElement>('from').value}&toDate=${$<HTMLInputElement>('to').value}${lines}`;
}

async function show(query: string | null): Promise<void> {
  problem(null);
  const { review } = await api<{ review: Review }>('GET', `/api/review${query ? `?${query}` : ''}`);
  const lastDay = new Date(Date.parse(review.to) - 1).toISOString();
  $<HTMLInputElement>('from').value = localDate(review.from);
  $<HTMLInputElement>('to').value = localDate(lastDay);
  $('report-title').textContent = `${plant.name}: review ${localDate(review.from)} to ${localDate(lastDay)}`;
  $('report-range').textContent = `Times in ${review.timeZone}. Made ${dateTime(new Date().toISOString(), plant.timeZone)}.`;
  $('lines').replaceChildren(...review.lines.map(renderLine));
  // the exports cover every line of the range; a spreadsheet filters by the line column
  const dates = `fromDate=${$<HTMLInputElement>('from').value}&toDate=${$<HTMLInputElement>('to').value}`;
  $('export-links').replaceChildren(
    ...(['events', 'checks', 'packs'] as const).flatMap((kind) => [
      el('a', { href: `/api/exports/${kind}.csv?${dates}` }, `${kind}.csv`),
      el('a', { href: `/api/exports/${kind}.json?${dates}` }, `${kind}.json`),
    ]),
  );
}

async function start(): Promise<void> {
  plant = await getPlant().catch(() => plant);
  $('plant').textContent = plant.name;
  const user = await whoAmI().catch(() => null);
  if (!user || (user.role !== 'quality' && user.role !== 'admin')) {
    $('signin').classList.remove('hidden');
    if (user) problem(`${user.displayName} is signed in as ${user.role}; the review needs the quality or admin role.`);
    return;
  }
  $('who').textContent = `${user.displayName} (${user.role})`;
  allLines = (await api<{ lines: Line[] }>('GET', '/api/lines')).lines;
  $('line-picks').append(...allLines.map((l) => el('label', {}, el('input', { type: 'checkbox', value: String(l.id), checked: '' }), l.code)));
  $<HTMLSelectElement>('cmp-line').replaceChildren(...allLines.map((l) => el('option', { value: String(l.id) }, `${l.code} — ${l.name}`)));
  await show(null);
}

$<HTMLFormElement>('signin-form').addEventListener('submit', async (e) => {
  e.preventDefault();
  try {
    await signIn($<HTMLInputElement>('si-user').value.trim(), $<HTMLInputElement>('si-secret').value);
    $('signin').classList.add('hidden');
    problem(null);
    await start();
  } catch (err) {
    problem(err instanceof ApiError ? (err.body?.message ?? 'Sign-in failed') : 'The server cannot be reached.');
  }
});

$<HTMLFormElement>('range-form').addEventListener('submit', (e) => {
  e.preventDefault();
  void show(rangeQuery()).catch((err) => problem(err instanceof ApiError ? (err.body?.message ?? err.message) : String(err)));
});
$('last-week').addEventListener('click', () => void show(null));
$('print').addEventListener('click', () => window.print());

/** A datetime-local value is plant-local wall time; the API wants an instant. */
function localInputToIso(value: string): string {
  const guess = Date.parse(`${value}:00Z`);
  const shown = Date.parse(new Date(guess).toLocaleString('sv-SE', { timeZone: plant.timeZone }).replace(' ', 'T') + 'Z');
  return new Date(guess - (shown - guess)).toISOString();
}

$<HTMLFormElement>('compare-form').addEventListener('submit', async (e) => {
  e.preventDefault();
  const period = (key: 'a' | 'b') => {
    const ops = $<HTMLInputElement>(`cmp-${key}-ops`).value.split(',').map((s) => s.trim()).filter(Boolean);
    return { from: localInputToIso($<HTMLInputElement>(`cmp-${key}-from`).value), to: localInputToIso($<HTMLInputElement>(`cmp-${key}-to`).value), ...(ops.length ? { operators: ops } : {}) };
  };
  try {
    const { comparison } = await api<{ comparison: { words: string } }>('POST', '/api/review/compare', { lineId: Number($<HTMLSelectElement>('cmp-line').value), a: period('a'), b: period('b') });
    $('compare-result').textContent = comparison.words;
  } catch (err) {
    $('compare-result').textContent = err instanceof ApiError ? (err.body?.message ?? err.message) : 'The server cannot be reached.';
  }
});

void start().catch((err) => problem(err instanceof ApiError ? (err.body?.message ?? err.message) : 'The server cannot be reached.'));
