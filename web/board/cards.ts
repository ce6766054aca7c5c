import type { LineStopView } from '../../server/shared/contract.js';
import { api, ApiError, type Alert } from '../shared/api.js';
import { alertTitle, clock, dateTime, duration, el, STOP_REASON_WORDS, stopWords } from '../shared/format.js';
import { shiftSizeWords as sizeWords } from './words-and-sound.js';

/** The board's cards and controls that need no state of the board's own: an alert's card and a line's run controls. */

/** An alert's card: what, rules, size and age, state, onset, note, shelving, who was told, cause; Acknowledge and Resolve while it is not resolved. */
export function alertItem(a: Alert, unit: 'g' | 'kg', timeZone: string, act: (a: Alert, what: 'acknowledge' | 'resolve') => Promise<void>): HTMLElement {
  const age = duration(Date.now() - Date.parse(a.openedAt));
  const state = a.state === 'open' ? 'OPEN' : a.state === 'acknowledged' ? `acknowledged by ${a.acknowledged?.by}` : `resolved by ${a.resolved?.by}`;
  const item = el(
    'div',
    { class: `alert ${a.severity}`, 'data-alert': String(a.id) },
    el('div', { class: 'what' }, `${a.severity === 'act' ? '■ act' : '▲ watch'} · ${alertTitle(a.kind, a.direction)}`),
    el('div', {}, a.ruleWords.join(', ')),
    el('div', {}, [sizeWords(a, unit), `${age} ago`].filter(Boolean).join(' · ')),
    el('div', { class: 'state' }, state),
  );
  if (a.kind !== 'check-overdue' && a.onset.at) item.append(el('div', { class: 'muted' }, `began about ${dateTime(a.changePoint?.at ?? a.onset.at, timeZone)}`));
  if (a.acknowledged?.note) item.append(el('div', { class: 'muted' }, `note: ${a.acknowledged.note}`));
  if (a.shelved && a.state === 'open' && Date.parse(a.shelved.until) > Date.now()) {
    item.append(el('div', { class: 'muted', 'data-shelved': '' }, `shelved until ${clock(a.shelved.until, timeZone)} by ${a.shelved.by ?? '—'}: ${a.shelved.reason ?? ''}`));
  }
  if (a.told.length > 0) {
    item.append(el('div', { class: 'muted', 'data-told': '' }, `told: ${a.told.map((t) => `${t.rule} (${t.channel === 'email' ? 'e-mail' : 'webhook'}) ${clock(t.at, timeZone)}`).join('; ')}`));
  }
  if (a.resolved) item.append(el('div', { class: 'muted' }, `cause: ${a.resolved.cause} · action: ${a.resolved.action}`));
  if (a.state !== 'resolved') {
    const buttons = el('div', { class: 'buttons' });
    if (a.state === 'open') {
      const ack = el('button', { type: 'button', 'data-ack': String(a.id) }, 'Acknowledge');
      ack.addEventListener('click', (e) => {
        e.stopPropagation();
        void act(a, 'acknowledge');
      });
      buttons.append(ack);
    }
    const resolve = el('button', { type: 'button', 'data-resolve': String(a.id) }, 'Resolve');
    resolve.addEventListener('click', (e) => {
      e.stopPropagation();
      void act(a, 'resolve');
    });
    buttons.append(resolve);
    item.append(buttons);
  }
  return item;
}

/** Start or stop the line from the wall, for a person signed in: "stopped — cleaning, since 14:05" and "Start line", or a reason and "Stop line". */
export function renderRunControls(box: HTMLElement, lineId: number, stop: LineStopView | null, signedIn: boolean, timeZone: string, problem: (text: string | null) => void): void {
  const words = el('span', { 'data-running': String(!stop) }, stop ? stopWords(stop, timeZone) : 'running');
  if (!signedIn) {
    box.replaceChildren(words);
    return;
  }
  const send = async (path: 'stop' | 'start', body?: Record<string, unknown>) => {
    try {
      await api('POST', `/api/lines/${lineId}/${path}`, body);
      problem(null);
    } catch (err) {
      problem(err instanceof ApiError ? (err.body?.message ?? 'The line could not be changed') : 'The server cannot be reached.');
    }
  };
  if (stop) {
    const start = el('button', { type: 'button' }, 'Start line');
    start.addEventListener('click', () => void send('start'));
    box.replaceChildren(words, start);
    return;
  }
  // off shift is the calendar's own reason, not one a person picks
  const reason = el('select', { id: 'board-stop-reason' }, ...Object.entries(STOP_REASON_WORDS).filter(([value]) => value !== 'off-shift').map(([value, text]) => el('option', { value }, text)));
  const stopButton = el('button', { type: 'button' }, 'Stop line');
  stopButton.addEventListener('click', () => void send('stop', { reason: reason.value }));
  box.replaceChildren(words, el('label', { for: 'board-stop-reason' }, 'Reason'), reason, stopButton);
}
