import '../shared/base.css';
import './entry.css';
import { api, ApiError, getPlant, NetworkError, signIn, signOut, whoAmI, type Check, type Line, type Plant, type CheckAnswer, type CheckSignal, type Product, type Status, type User } from '../shared/api.js';
import { clock, decimalsFor, el, overUnder, parseDecimal, stopWords, weight } from '../shared/format.js';
import { enqueue, remove, waiting, type QueuedCheck } from './queue.js';
import { setUpScale } from './scale.js';
import type { ScaleProfileView } from '../../server/scales/contract.js';

const LINE_KEY = 'heft.entry.lineId';
const $ = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;

/** Each rule this check broke, with its severity and its words from the summary of the alert it joined. */
function rulesBroken(answer: CheckAnswer): { rule: string; severity: 'act' | 'watch'; words: string }[] {
  return answer.signals.flatMap((group: CheckSignal) => {
    const alert = answer.alerts.find((a) => a.id === group.alertId);
    return group.rules.map((r) => ({ ...r, words: alert?.ruleWords[alert.rules.indexOf(r.rule)] ?? r.rule }));
  });
}

const state: {
  plant: Plant;
  user: User | null;
  line: Line | null;
  product: Product | null;
  lastCheck: Check | null;
  correcting: Check | null;
  inputs: HTMLInputElement[];
  flushing: boolean;
  retryMs: number;
  retryTimer: number | null;
  scale: ScaleProfileView | null;
} = { scale: null, plant: { name: 'Heft', timeZone: 'UTC' }, user: null, line: null, product: null, lastCheck: null, correcting: null, inputs: [], flushing: false, retryMs: 2000, retryTimer: null };

function show(section: 'signin' | 'pick' | 'entry'): void {
  for (const id of ['signin', 'pick', 'entry']) $(id).classList.toggle('hidden', id !== section);
  $('sign-out').classList.toggle('hidden', !state.user);
  $('change-line').classList.toggle('hidden', !state.user || section !== 'entry');
  $('who').textContent = state.user ? `${state.user.displayName} (${state.user.role})` : '';
}

function problem(text: string | null): void {
  $('problem').textContent = text ?? '';
  $('problem').classList.toggle('hidden', !text);
}

// ------------------------------------------------------------------ start

async function start(): Promise<void> {
  const bound = new URLSearchParams(location.search).get('line');
  if (bound && /^\d+$/.test(bound)) localStorage.setItem(LINE_KEY, bound);
  state.plant = await getPlant().catch(() => state.plant);
  window.addEventListener('online', () => void flush());
  await refreshQueue();
  try {
    state.user = await whoAmI();
  } catch {
    problem('The server cannot be reached. Checks keyed in now are kept on this tablet and sent later.');
  }
  if (!state.user) {
    show('signin');
    $<HTMLInputElement>('username').focus();
    return;
  }
  await openLine();
  void flush();
}

$<HTMLFormElement>('signin-form').addEventListener('submit', async (event) => {
  event.preventDefault();
  problem(null);
  try {
    state.user = await signIn($<HTMLInputElement>('username').value.trim(), $<HTMLInputElement>('pin').value);
    $<HTMLInputElement>('pin').value = '';
    await openLine();
    void flush();
  } catch (err) {
    problem(err instanceof ApiError ? (err.body?.message ?? 'Sign-in failed') : 'The server cannot be reached; try again in a moment.');
  }
});

$('sign-out').addEventListener('click', async () => {
  await signOut().catch(() => {});
  state.user = null;
  show('signin');
});

$('change-line').addEventListener('click', () => {
  localStorage.removeItem(LINE_KEY);
  void openLine();
});

async function openLine(): Promise<void> {
  const { lines } = await api<{ lines: Line[] }>('GET', '/api/lines');
  const wanted = Number(localStorage.getItem(LINE_KEY));
  const line = lines.find((l) => l.id === wanted) ?? null;
  if (!line) {
    const list = $('line-list');
    list.replaceChildren(
      ...lines.map((l) => {
        const b = el('button', { type: 'button' }, `${l.code} — ${l.name}`, el('br'), el('span', { class: 'muted' }, l.product ? l.product.name : 'no product running'));
        b.addEventListener('click', () => {
          localStorage.setItem(LINE_KEY, String(l.id));
          void openLine();
        });
        return b;
      }),
    );
    show('pick');
    return;
  }
  state.line = line;
  state.product = line.product;
  showRunState(line);
  $('line-title').textContent = `${line.code} — ${line.name}`;
  $('product-title').textContent = line.product ? line.product.name : 'no product running';
  const latest = await api<{ checks: Check[] }>('GET', `/api/lines/${line.id}/checks?limit=1`).catch(() => ({ checks: [] as Check[] }));
  state.lastCheck = latest.checks[0] ?? null;
  state.scale = (await api<{ scale: ScaleProfileView }>('GET', `/api/lines/${line.id}/scale`).catch(() => null))?.scale ?? null;
  $('correct').classList.toggle('hidden', !state.lastCheck);
  buildForm();
  show('entry');
  state.inputs[0]?.focus();
  scale.lineReady();
}

// ------------------------------------------------------------------ running or stopped

/** Running, or "stopped — cleaning, since 14:05", with the button that changes it. */
function showRunState(line: Line): void {
  const words = $('run-words');
  words.textContent = line.stop ? stopWords(line.stop, state.plant.timeZone) : 'Line running';
  words.dataset.running = String(line.running);
  $('stop-line').classList.toggle('hidden', !line.running);
  $('start-line').classList.toggle('hidden', line.running);
  $('stop-form').classList.add('hidden');
}

async function changeRunState(path: 'stop' | 'start', body?: Record<string, unknown>): Promise<void> {
  const line = state.line;
  if (!line) return;
  problem(null);
  try {
    const answer = await api<{ line: Line }>('POST', `/api/lines/${line.id}/${path}`, body);
    state.line = answer.line;
    showRunState(answer.line);
  } catch (err) {
    problem(err instanceof ApiError ? (err.body?.message ?? 'The line could not be changed') : 'The server cannot be reached; try again in a moment.');
  }
}

$('stop-line').addEventListener('click', () => {
  $('stop-form').classList.remove('hidden');
  $('stop-reason').focus();
});
$('stop-cancel').addEventListener('click', () => $('stop-form').classList.add('hidden'));
$<HTMLFormElement>('stop-form').addEventListener('submit', (event) => {
  event.preventDefault();
  const note = $<HTMLInputElement>('stop-note').value.trim();
  void changeRunState('stop', { reason: $<HTMLSelectElement>('stop-reason').value, ...(note ? { note } : {}) }).then(() => {
    $<HTMLInputElement>('stop-note').value = '';
  });
});
$('start-line').addEventListener('click', () => void changeRunState('start'));

// ------------------------------------------------------------------ the form

function buildForm(): void {
  const p = state.product;
  const facts = $('facts');
  if (!p) {
    facts.replaceChildren(el('div', {}, el('dt', {}, 'Product'), el('dd', {}, 'none running: ask the supervisor for a changeover')));
    $('fields').replaceChildren();
    state.inputs = [];
    return;
  }
  const fact = (label: string, value: string) => el('div', {}, el('dt', {}, label), el('dd', {}, value));
  facts.replaceChildren(
    fact('Nominal', weight(p.nominal, p.unit)),
    fact('Target', weight(p.target, p.unit)),
    fact('T1', p.t1 === null ? '—' : weight(p.t1, p.unit)),
    fact('T2', p.t2 === null ? '—' : weight(p.t2, p.unit)),
  );
  $('basis').textContent =
    p.entryBasis === 'gross'
      ? `Key in gross weights (pack with its packaging): the tare of ${weight(p.tare, p.unit)} is taken off.`
      : `Key in net weights (product only).`;
  const n = state.correcting?.n ?? p.subgroupSize;
  $('weights-legend').textContent = `${n} packs, ${p.entryBasis} weight in ${p.unit}`;
  const fields = $('fields');
  state.inputs = [];
  fields.replaceChildren(
    ...Array.from({ length: n }, (_, i) => {
      const id = `w${i}`;
      const input = el('input', { id, name: id, inputmode: 'decimal', autocomplete: 'off', enterkeyhint: i === n - 1 ? 'send' : 'next', 'aria-describedby': `${id}-flag` });
      const flag = el('span', { id: `${id}-flag`, class: 'flag', 'aria-live': 'polite' });
      input.addEventListener('input', () => {
        delete input.parentElement?.dataset.source; // typed over: no longer the scale's
        flagValue(input, flag);
      });
      input.addEventListener('keydown', (event) => {
        if (event.key !== 'Enter') return;
        event.preventDefault();
        if (i < n - 1) state.inputs[i + 1]?.focus();
        else void submit();
      });
      state.inputs.push(input);
      return el('div', { class: 'field' }, el('label', { for: id }, `Pack ${i + 1}`), input, flag);
    }),
  );
  if (state.correcting) state.correcting.weights.forEach((w, i) => {
    const input = state.inputs[i];
    if (!input) return;
    input.value = String(p.entryBasis === 'gross' ? round(w + p.tare, p.unit) : w);
    flagValue(input, input.parentElement?.querySelector('.flag') as HTMLElement);
  });
}

function round(value: number, unit: 'g' | 'kg'): number {
  const f = 10 ** (decimalsFor(unit) + 1);
  return Math.round(value * f) / f;
}

type Flag = 'empty' | 'bad' | 'suspect' | 't2' | 't1' | 'ok';

/** What a keyed value means for this product: not a number, a probable slip, below T2 or T1, or fine. */
function judgeValue(text: string): { flag: Flag; value: number | null; words: string } {
  const p = state.product as Product;
  if (text.trim() === '') return { flag: 'empty', value: null, words: '' };
  const value = parseDecimal(text);
  if (value === null || value <= 0) return { flag: 'bad', value: null, words: '✕ not a weight: use digits and one decimal mark' };
  const net = p.entryBasis === 'gross' ? value - p.tare : value;
  if (net < 0.5 * p.nominal || net > 1.5 * p.nominal) return { flag: 'suspect', value, words: `⚠ far from ${weight(p.nominal, p.unit)}: check the decimal point` };
  if (p.t2 !== null && net < p.t2) return { flag: 't2', value, words: `✕ below T2 (${weight(p.t2, p.unit)}): this pack must not be sold` };
  if (p.t1 !== null && net < p.t1) return { flag: 't1', value, words: `▼ below T1 (${weight(p.t1, p.unit)})` };
  return { flag: 'ok', value, words: '' };
}

function flagValue(input: HTMLInputElement, flag: HTMLElement): void {
  const judged = judgeValue(input.value);
  flag.textContent = judged.words;
  flag.className = `flag ${judged.flag}`;
  input.setAttribute('aria-invalid', judged.flag === 'bad' ? 'true' : 'false');
}

$('next').addEventListener('click', () => {
  const i = state.inputs.indexOf(document.activeElement as HTMLInputElement);
  const next = state.inputs[i + 1] ?? state.inputs.find((x) => x.value.trim() === '') ?? state.inputs[0];
  next?.focus();
});

$<HTMLFormElement>('weights-form').addEventListener('submit', (event) => {
  event.preventDefault();
  void submit();
});

$('correct').addEventListener('click', () => {
  if (!state.lastCheck) return;
  state.correcting = state.lastCheck;
  $('reason-row').classList.remove('hidden');
  $('cancel-correction').classList.remove('hidden');
  $('submit').textContent = 'Send correction';
  buildForm();
  state.inputs[0]?.focus();
});

$('cancel-correction').addEventListener('click', endCorrection);

function endCorrection(): void {
  state.correcting = null;
  $<HTMLInputElement>('reason').value = '';
  $('reason-row').classList.add('hidden');
  $('cancel-correction').classList.add('hidden');
  $('submit').textContent = 'Send check';
  buildForm();
}

function askToConfirm(values: string[]): Promise<boolean> {
  const dialog = $<HTMLDialogElement>('confirm');
  $('confirm-text').textContent = `${values.join(', ')} ${values.length === 1 ? 'is' : 'are'} far from the nominal of ${weight(state.product!.nominal, state.product!.unit)} — probably a slipped decimal point. Fix ${values.length === 1 ? 'it' : 'them'}, or send as keyed if the scale really showed this.`;
  return new Promise((resolve) => {
    const done = (keep: boolean) => {
      dialog.close();
      resolve(keep);
    };
    $('confirm-fix').onclick = () => done(false);
    $('confirm-keep').onclick = () => done(true);
    dialog.oncancel = () => resolve(false);
    dialog.showModal();
    $('confirm-fix').focus();
  });
}

async function submit(): Promise<void> {
  const p = state.product;
  const line = state.line;
  if (!p || !line) return;
  problem(null);
  const judged = state.inputs.map((input) => ({ input, ...judgeValue(input.value) }));
  const missing = judged.find((j) => j.flag === 'empty' || j.flag === 'bad');
  if (missing) {
    problem(missing.flag === 'empty' ? 'Every pack needs a weight.' : 'One of the weights is not a number.');
    missing.input.focus();
    return;
  }
  const suspect = judged.filter((j) => j.flag === 'suspect');
  let confirmSuspect = false;
  if (suspect.length > 0) {
    confirmSuspect = await askToConfirm(suspect.map((j) => weight(j.value as number, p.unit)));
    if (!confirmSuspect) {
      suspect[0]?.input.focus();
      suspect[0]?.input.select();
      return;
    }
  }
  const reason = $<HTMLInputElement>('reason').value.trim();
  if (state.correcting && !reason) {
    problem('Say why the last check is being corrected.');
    $('reason').focus();
    return;
  }
  const body: Record<string, unknown> = {
    weights: judged.map((j) => j.value as number),
    clientId: crypto.randomUUID(),
    basis: p.entryBasis,
    ...(confirmSuspect ? { confirmSuspect: true } : {}),
    ...(!state.correcting && state.inputs.every((i) => i.parentElement?.dataset.source === 'scale') ? { source: 'scale' } : {}),
    ...(state.correcting ? { reason } : {}),
  };
  const item: QueuedCheck = { clientId: body.clientId as string, lineId: line.id, correctsCheckId: state.correcting?.id ?? null, body, queuedAt: Date.now() };
  await enqueue(item);
  for (const input of state.inputs) {
    input.value = '';
    delete input.parentElement?.dataset.source;
    flagValue(input, input.parentElement?.querySelector('.flag') as HTMLElement);
  }
  if (state.correcting) endCorrection();
  state.inputs[0]?.focus();
  await flush(item.clientId);
}

// ------------------------------------------------------------------ sending

async function refreshQueue(): Promise<QueuedCheck[]> {
  const items = await waiting();
  const q = $('queue');
  q.textContent = items.length === 0 ? '' : `${items.length} check${items.length === 1 ? '' : 's'} waiting to send — kept on this tablet; sent as soon as the server answers.`;
  q.classList.toggle('hidden', items.length === 0);
  return items;
}

/** Sends what waits, oldest first, each exactly once (the server keys them by clientId). */
async function flush(justKeyed?: string): Promise<void> {
  if (state.flushing) return;
  state.flushing = true;
  if (state.retryTimer !== null) {
    window.clearTimeout(state.retryTimer);
    state.retryTimer = null;
  }
  try {
    for (const item of await refreshQueue()) {
      const url = item.correctsCheckId === null ? `/api/lines/${item.lineId}/checks` : `/api/checks/${item.correctsCheckId}/revisions`;
      // a check that waited (offline) was taken when it was keyed, not when it finally arrives
      const late = item.correctsCheckId === null && Date.now() - item.queuedAt > 30_000;
      const body = late ? { ...item.body, takenAt: new Date(item.queuedAt).toISOString() } : item.body;
      try {
        let answer: CheckAnswer;
        try {
          answer = await api<CheckAnswer>('POST', url, body);
        } catch (err) {
          // the tablet's clock may disagree with the server's: then let the server stamp it
          if (!(late && err instanceof ApiError && err.status === 400 && err.body?.issues?.some((i) => i.field === 'takenAt'))) throw err;
          answer = await api<CheckAnswer>('POST', url, item.body);
        }
        await remove(item.clientId);
        state.retryMs = 2000;
        if (item.lineId === state.line?.id) {
          state.lastCheck = answer.check;
          $('correct').classList.remove('hidden');
          await showResult(answer, item.clientId !== justKeyed);
        }
      } catch (err) {
        if (err instanceof NetworkError || (err instanceof ApiError && err.status >= 500)) {
          state.retryTimer = window.setTimeout(() => void flush(), state.retryMs);
          state.retryMs = Math.min(state.retryMs * 2, 30_000);
          if (item.clientId === justKeyed) problem('No connection: the check is saved on this tablet and will be sent by itself.');
          break;
        }
        if (err instanceof ApiError && err.status === 401) {
          problem('Your sign-in has ended. Sign in again: waiting checks will then be sent.');
          state.user = null;
          show('signin');
          break;
        }
        // refused for good (the line changed product, a correction came too late…): say so, with the
        // weights, so they can be keyed again, and drop it
        await remove(item.clientId);
        const weights = (item.body.weights as number[]).join(', ');
        problem(`A check (${weights}) could not be stored: ${err instanceof ApiError ? (err.body?.message ?? err.message) : String(err)}`);
      }
    }
  } finally {
    state.flushing = false;
    await refreshQueue();
  }
}

async function showResult(answer: CheckAnswer, wasWaiting: boolean): Promise<void> {
  const p = state.product as Product;
  const c = answer.check;
  const status = await api<{ status: Status }>('GET', `/api/lines/${c.lineId}/status`).then((r) => r.status).catch(() => null);
  const box = $('result');
  const lines: HTMLElement[] = [];
  const se = c.se === null ? 'no SE: one pack' : `SE ${weight(c.se, p.unit)}`;
  lines.push(el('p', { class: 'headline' }, `Mean ${weight(c.mean, p.unit)}, ${overUnder(c.mean - c.target, p.unit)} target (${se}).`));
  if (wasWaiting) lines.push(el('p', { class: 'muted' }, `This check was keyed while offline and has now been sent (taken ${clock(c.takenAt, state.plant.timeZone)}).`));
  if (c.belowT2 > 0) lines.push(el('p', {}, `✕ ${c.belowT2} pack${c.belowT2 > 1 ? 's' : ''} below T2: must not be sold. Set ${c.belowT2 > 1 ? 'them' : 'it'} aside and tell the supervisor.`));
  else if (c.belowT1 > 0) lines.push(el('p', {}, `▼ ${c.belowT1} pack${c.belowT1 > 1 ? 's' : ''} below T1.`));
  const broken = rulesBroken(answer);
  const act = broken.some((s) => s.severity === 'act');
  for (const s of broken.filter((x) => x.rule !== 'pack-below-t2')) {
    lines.push(el('p', {}, `${s.severity === 'act' ? '■' : '▲'} ${s.words}: ${s.severity === 'act' ? 'tell the supervisor now.' : 'tell the supervisor.'}`));
  }
  if (answer.signals.length === 0 && c.belowT1 === 0) lines.push(el('p', {}, '● Nothing fired: carry on.'));
  if (status?.nextCheckDue) lines.push(el('p', {}, `Next check due at ${clock(status.nextCheckDue, state.plant.timeZone)}.`));
  box.replaceChildren(...lines);
  box.className = `result ${act || c.belowT2 > 0 ? 'act' : answer.signals.length > 0 || c.belowT1 > 0 ? 'watch' : 'steady'}`;
}

void start();

// ------------------------------------------------------------------ a serial scale (Web Serial)

const scale = setUpScale($<HTMLButtonElement>('connect-scale'), {
  current: () => (state.product && state.scale && !$('entry').classList.contains('hidden') ? { profile: state.scale, unit: state.product.unit } : null),
  onWeight(value) {
    const input = state.inputs.find((i) => i.value.trim() === '');
    if (!input || !state.product) return false;
    input.value = String(value);
    (input.parentElement as HTMLElement).dataset.source = 'scale';
    flagValue(input, input.parentElement?.querySelector('.flag') as HTMLElement);
    const next = state.inputs.find((i) => i.value.trim() === '');
    if (next) next.focus();
    else if (state.scale?.sendOnLast) void submit();
    else $('submit').focus();
    return true;
  },
  say: (text, tone) => Object.assign($('scale-note'), { textContent: text }).setAttribute('data-tone', tone),
});
