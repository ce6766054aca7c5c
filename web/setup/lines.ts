import { api, ApiError, type Line, type Product } from '../shared/api.js';
import { el } from '../shared/format.js';
import { when } from './when.js';

/*
 * The Lines part of set-up: each line with the product it runs and since when; the admin makes and
 * renames lines; a changeover asks for the new product and says what it restarts.
 */

const $ = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;

/** A small form in the name's cell: the new name, saved through PATCH /api/lines/:id (audited there). */
function renameForm(l: Line, cell: HTMLElement, reload: () => Promise<void>, problem: (text: string | null) => void): void {
  const input = el('input', { id: `rename-${l.id}`, value: l.name });
  const error = el('span', { class: 'field-error', id: `rename-${l.id}-error` });
  const form = el('form', { class: 'reset' }, el('label', { for: input.id }, `New name for ${l.code}`), input, el('button', { type: 'submit', class: 'primary' }, 'Save'), error);
  form.addEventListener('submit', async (e) => {
    e.preventDefault();
    try {
      await api('PATCH', `/api/lines/${l.id}`, { name: input.value.trim() });
      problem(null);
      await reload();
    } catch (err) {
      const issue = err instanceof ApiError ? err.body?.issues?.find((i) => i.field === 'name') : undefined;
      if (issue) error.textContent = issue.message;
      else problem(err instanceof ApiError ? (err.body?.message ?? err.message) : 'The server cannot be reached.');
    }
  });
  cell.replaceChildren(form);
  input.focus();
}

/** Draws the lines; `reload` fetches lines and products again after a change. */
export function renderLines(lines: Line[], products: Product[], isAdmin: boolean, reload: () => Promise<void>, problem: (text: string | null) => void): void {
  $('lines-table').querySelector('tbody')?.replaceChildren(
    ...lines.map((l) => {
      const pick = el('select', { id: `co-${l.id}`, 'aria-label': `New product for ${l.code}` }, ...products.map((p) => el('option', { value: String(p.id) }, `${p.code} — ${p.name}`)));
      if (l.product) pick.value = String(l.product.id);
      const change = el('button', { type: 'button' }, 'Change over');
      change.addEventListener('click', async () => {
        const chosen = products.find((p) => p.id === Number(pick.value));
        if (!chosen) return;
        const ok = window.confirm(`Change ${l.code} over to ${chosen.code}? This starts a new run: the detectors and the rolling window start again, and the next check is due one sampling interval (${chosen.samplingMinutes} min) from now.`);
        if (!ok) return;
        try {
          await api('PUT', `/api/lines/${l.id}/product`, { productId: chosen.id });
          problem(null);
          await reload();
        } catch (err) {
          problem(err instanceof ApiError ? (err.body?.message ?? err.message) : 'The server cannot be reached.');
        }
      });
      const state = l.running ? 'running' : `stopped (${l.stop?.reason ?? '?'})`;
      const nameCell = el('td', {}, l.name);
      if (isAdmin) {
        const rename = el('button', { type: 'button', class: 'small' }, 'Rename');
        rename.addEventListener('click', () => renameForm(l, nameCell, reload, problem));
        nameCell.append(' ', rename);
      }
      return el('tr', { 'data-line': l.code }, el('td', {}, l.code), nameCell, el('td', {}, l.product ? l.product.code : 'no product'), el('td', {}, when(l.runStartedAt)), el('td', {}, state), el('td', {}, el('label', { for: pick.id, class: 'muted' }, 'New product'), ' ', pick, ' ', change));
    }),
  );
  $('line-form').classList.toggle('hidden', !isAdmin);
  $<HTMLFormElement>('line-form').onsubmit = async (e) => {
    e.preventDefault();
    for (const s of document.querySelectorAll<HTMLElement>('[id^="ln-"][id$="-error"]')) s.textContent = '';
    const perHour = $<HTMLInputElement>('ln-packsPerHour').value.trim();
    try {
      await api('POST', '/api/lines', { code: $<HTMLInputElement>('ln-code').value.trim(), name: $<HTMLInputElement>('ln-name').value.trim(), packsPerHour: perHour === '' ? null : Number(perHour), continuous: $<HTMLInputElement>('ln-continuous').checked });
      $('line-saved').textContent = `Added ${$<HTMLInputElement>('ln-code').value.trim()}.`;
      await reload();
    } catch (err) {
      const issues = err instanceof ApiError ? (err.body?.issues ?? []) : [];
      for (const i of issues) {
        const slot = document.getElementById(`ln-${i.field}-error`);
        if (slot) slot.textContent = i.message;
      }
      if (issues.length === 0) problem(err instanceof ApiError ? (err.body?.message ?? err.message) : 'The server cannot be reached.');
    }
  };
}
