import type uPlot from 'uplot';
import type { LimitsVersionView, Proposal } from '../../server/limits/contract.js';
import { api, ApiError, type Line, type Plant } from '../shared/api.js';
import { meanChart, meanChartData, type ChartPoint } from '../shared/charts.js';
import { dateTime, el, isoToWallTime, wallTimeToIso, weight } from '../shared/format.js';

/*
 * The Limits part of set-up: a line, a baseline range in the plant's zone and a σ method give a
 * proposal drawn over the baseline's checks, with the checks that break it marked and listed. The
 * quality manager leaves checks out with a reason, proposes again, and approves with a note; the
 * approved versions are listed with the one in force marked. Proposal and approval are the API's.
 */

const $ = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;

interface LimitsState {
  plant: Plant;
  lines: Line[];
  proposal: Proposal | null;
  /** Checks left out, by id, with the reason typed. */
  excluded: Map<number, string>;
  chart: uPlot | null;
}

const state: LimitsState = { plant: { name: 'Heft', timeZone: 'UTC' } as Plant, lines: [], proposal: null, excluded: new Map(), chart: null };
const selectedLine = () => state.lines.find((l) => l.id === Number($<HTMLSelectElement>('lm-line').value)) ?? null;
const messageOf = (err: unknown) => (err instanceof ApiError ? (err.body?.message ?? err.message) : 'The server cannot be reached.');

/** Fills the line choice and the last week as the default baseline, then lists the chosen line's versions. */
export async function setUpLimits(plant: Plant, lines: Line[]): Promise<void> {
  state.plant = plant;
  state.lines = lines;
  const pick = $<HTMLSelectElement>('lm-line');
  const before = pick.value;
  pick.replaceChildren(...lines.map((l) => el('option', { value: String(l.id) }, `${l.code} — ${l.name}${l.product ? ` (${l.product.code})` : ', no product'}`)));
  if (before && lines.some((l) => String(l.id) === before)) pick.value = before;
  $('lm-zone').textContent = `Times in ${plant.timeZone}.`;
  if ($<HTMLInputElement>('lm-from').value === '') {
    const now = Date.now();
    $<HTMLInputElement>('lm-from').value = isoToWallTime(new Date(now - 7 * 86_400_000).toISOString(), plant.timeZone);
    // a minute on, so that a check of the current minute is in the range (the field has no seconds)
    $<HTMLInputElement>('lm-to').value = isoToWallTime(new Date(now + 60_000).toISOString(), plant.timeZone);
  }
  await loadVersions();
}

function clearProposal(): void {
  state.proposal = null;
  state.excluded.clear();
  state.chart?.destroy();
  state.chart = null;
  $('lm-proposal').classList.add('hidden');
}

$('lm-line').addEventListener('change', () => {
  clearProposal();
  void loadVersions();
});

/** The range and method as the API takes them; a field that does not read is named beside it. */
function baselineRequest(): { from: string; to: string; method?: string } | null {
  for (const s of document.querySelectorAll<HTMLElement>('[id^="lm-"][id$="-error"]')) s.textContent = '';
  const from = wallTimeToIso($<HTMLInputElement>('lm-from').value, state.plant.timeZone);
  const to = wallTimeToIso($<HTMLInputElement>('lm-to').value, state.plant.timeZone);
  if (!from) $('lm-from-error').textContent = 'give a date and a time';
  if (!to) $('lm-to-error').textContent = 'give a date and a time';
  if (!from || !to) return null;
  const method = $<HTMLSelectElement>('lm-method').value;
  return { from, to, ...(method ? { method } : {}) };
}

const exclusions = () => [...state.excluded].map(([checkId, reason]) => ({ checkId, reason }));

function showError(err: unknown): void {
  const issues = err instanceof ApiError ? (err.body?.issues ?? []) : [];
  let placed = false;
  for (const i of issues) {
    const slot = document.getElementById(`lm-${i.field.split('.')[0]}-error`);
    if (slot) {
      slot.textContent = i.message;
      placed = true;
    }
  }
  $('lm-problem').textContent = placed ? '' : messageOf(err);
}

async function propose(): Promise<void> {
  const line = selectedLine();
  const body = baselineRequest();
  if (!line || !body) return;
  $('lm-problem').textContent = '';
  try {
    const { proposal } = await api<{ proposal: Proposal }>('POST', `/api/lines/${line.id}/limits/proposal`, { ...body, exclude: exclusions() });
    state.proposal = proposal;
    drawProposal(line, proposal);
  } catch (err) {
    showError(err);
  }
}
$<HTMLFormElement>('limits-form').addEventListener('submit', (e) => {
  e.preventDefault();
  void propose();
});

function drawProposal(line: Line, p: Proposal): void {
  const unit = line.product?.unit ?? 'g';
  const w = (v: number) => weight(v, unit);
  $('lm-proposal').classList.remove('hidden');
  const left = p.points.length - p.checks;
  $('lm-summary').replaceChildren(
    el('div', {}, el('dt', {}, 'Centre'), el('dd', {}, w(p.centre))),
    el('div', {}, el('dt', {}, 'σ of one pack'), el('dd', {}, `${w(p.sigma)} (${p.method})`)),
    el('div', {}, el('dt', {}, 'Mean limits'), el('dd', {}, `${w(p.meanChart.lcl)} to ${w(p.meanChart.ucl)}`)),
    el('div', {}, el('dt', {}, `${p.spreadChart.chart} chart limits`), el('dd', {}, `${p.spreadChart.lcl === null ? '—' : w(p.spreadChart.lcl)} to ${w(p.spreadChart.ucl)}`)),
    el('div', {}, el('dt', {}, 'Baseline'), el('dd', {}, `${p.checks} checks, ${p.packs} packs${left > 0 ? `; ${left} left out` : ''}`)),
  );
  const kept = p.points.filter((x) => x.excludedReason === null);
  const points: ChartPoint[] = kept.map((x) => ({ checkId: x.checkId, at: Date.parse(x.takenAt) / 1000, mean: x.mean, n: x.n, sd: x.sd, range: x.range }));
  const marked = new Set(p.breaking.map((b) => b.checkId));
  state.chart?.destroy();
  const box = $('lm-chart');
  box.replaceChildren();
  state.chart = meanChart(box, Math.max(320, Math.min(box.clientWidth || 760, 900)), 260, meanChartData(points, p.centre, p.sigma, marked));
  $('lm-chart-caption').textContent = `${kept.length} baseline checks; ◇ marks the ${p.breaking.length} that break the proposed limits.`;
  renderBreaking(p, w);
  renderExcluded(p, w);
}

/** The checks that break the proposal, each with a reason box and a button that leaves it out. */
function renderBreaking(p: Proposal, w: (v: number) => string): void {
  const rows = p.breaking.map((b) => {
    const reason = el('input', { id: `lm-reason-${b.checkId}`, placeholder: 'e.g. a known upset' });
    const leave = el('button', { type: 'button' }, 'Leave out');
    leave.addEventListener('click', () => {
      const text = reason.value.trim();
      if (text === '') {
        reason.setAttribute('aria-invalid', 'true');
        $('lm-problem').textContent = `Give a reason for leaving out the check at ${dateTime(b.takenAt, state.plant.timeZone)}.`;
        return;
      }
      state.excluded.set(b.checkId, text);
      void propose();
    });
    return el('tr', { 'data-check': String(b.checkId) }, el('td', {}, dateTime(b.takenAt, state.plant.timeZone)), el('td', {}, w(b.mean)), el('td', {}, b.reasons.join('; ')), el('td', {}, el('label', { for: reason.id }, 'Reason'), ' ', reason, ' ', leave));
  });
  $('lm-breaking').querySelector('tbody')?.replaceChildren(...(rows.length ? rows : [el('tr', {}, el('td', { colspan: '4' }, 'No baseline check breaks the proposed limits.'))]));
}

function renderExcluded(p: Proposal, w: (v: number) => string): void {
  const out = p.points.filter((x) => x.excludedReason !== null);
  if (out.length === 0) return void $('lm-excluded').replaceChildren(el('li', { class: 'muted' }, 'none: every check of the range is in the estimate'));
  $('lm-excluded').replaceChildren(
    ...out.map((x) => {
      const back = el('button', { type: 'button' }, 'Put back');
      back.addEventListener('click', () => {
        state.excluded.delete(x.checkId);
        void propose();
      });
      return el('li', { 'data-check': String(x.checkId) }, `${dateTime(x.takenAt, state.plant.timeZone)}, mean ${w(x.mean)}: ${x.excludedReason} `, back);
    }),
  );
}

$('lm-approve').addEventListener('click', async () => {
  const line = selectedLine();
  const body = baselineRequest();
  if (!line || !body || !state.proposal) return;
  const note = $<HTMLTextAreaElement>('lm-note').value.trim();
  try {
    const { limits } = await api<{ limits: LimitsVersionView }>('POST', `/api/lines/${line.id}/limits`, { basis: 'baseline', ...body, exclude: exclusions(), ...(note ? { note } : {}) });
    $('lm-approved').textContent = `Approved: centre ${weight(limits.centre, line.product?.unit ?? 'g')}, σ ${weight(limits.sigma, line.product?.unit ?? 'g')}. ${line.code} judges its next check by them; its detectors start again.`;
    $<HTMLTextAreaElement>('lm-note').value = '';
    clearProposal();
    await loadVersions();
  } catch (err) {
    showError(err);
  }
});

/** Every approved version of the line: who, when, method, baseline and note; the one in force marked. */
async function loadVersions(): Promise<void> {
  const line = selectedLine();
  const body = $('lm-versions').querySelector('tbody');
  if (!line || !body) return;
  const { limits } = await api<{ limits: LimitsVersionView[] }>('GET', `/api/lines/${line.id}/limits`);
  const inForce = [...limits].reverse().find((v) => v.productId === line.product?.id)?.id;
  const tz = state.plant.timeZone;
  const unit = line.product?.unit ?? 'g';
  body.replaceChildren(
    ...[...limits].reverse().map((v) => {
      const baseline = v.baselineFrom && v.baselineTo ? `${dateTime(v.baselineFrom, tz)} to ${dateTime(v.baselineTo, tz)}, ${v.baselineChecks} checks${v.excluded.length ? `, ${v.excluded.length} left out (${v.excluded.map((x) => x.reason).join('; ')})` : ''}` : 'from a standard';
      return el('tr', { 'data-version': String(v.id), ...(v.id === inForce ? { class: 'in-force' } : {}) }, el('td', {}, v.id === inForce ? 'in force' : ''), el('td', {}, dateTime(v.approvedAt, tz)), el('td', {}, v.approvedBy), el('td', {}, v.method), el('td', {}, baseline), el('td', {}, weight(v.centre, unit)), el('td', {}, weight(v.sigma, unit)), el('td', {}, v.note ?? ''));
    }),
  );
}
