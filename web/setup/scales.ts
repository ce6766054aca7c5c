import { api, ApiError, type Line } from '../shared/api.js';
import { el } from '../shared/format.js';
import { when } from './when.js';
import type { ScaleProfileView } from '../../server/scales/contract.js';

/*
 * The Scales part of set-up: a line's scale profile (how its scale is connected and how a line of
 * its text is read), and a test box that shows what a pasted line reads as before it is saved.
 */

const $ = <T extends HTMLElement>(id: string) => document.getElementById(id) as T;
const FIELDS = ['connection', 'baudRate', 'dataBits', 'parity', 'stopBits', 'lineEnding', 'pattern', 'unstablePattern', 'defaultUnit', 'sendOnLast'] as const;
const NUMBERS = new Set(['baudRate', 'dataBits', 'stopBits']);
const input = (name: string) => $<HTMLInputElement | HTMLSelectElement>(`sc-${name}`);

function clearErrors(): void {
  for (const e of document.querySelectorAll<HTMLElement>('[id^="sc-"][id$="-error"]')) e.textContent = '';
}

function showErrors(err: unknown): void {
  clearErrors();
  const issues = err instanceof ApiError ? (err.body?.issues ?? []) : [];
  for (const i of issues) {
    const slot = document.getElementById(`sc-${i.field}-error`);
    if (slot) slot.textContent = i.message;
  }
  $('scale-saved').textContent = issues.length ? '' : err instanceof ApiError ? (err.body?.message ?? err.message) : 'The server cannot be reached.';
}

function body(): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const name of FIELDS) {
    const v = input(name).value.trim();
    if (name === 'sendOnLast') out[name] = v === 'true';
    else if (name === 'pattern' || name === 'unstablePattern') out[name] = v === '' ? null : v;
    else out[name] = NUMBERS.has(name) ? Number(v) : v;
  }
  return out;
}

async function load(lineId: number): Promise<void> {
  const { scale } = await api<{ scale: ScaleProfileView }>('GET', `/api/lines/${lineId}/scale`);
  for (const name of FIELDS) input(name).value = scale[name] === null ? '' : String(scale[name]);
  $('scale-state').textContent = scale.configured ? `Set by ${scale.updatedBy} on ${when(scale.updatedAt)}.` : 'This line uses the defaults.';
  clearErrors();
  $('scale-saved').textContent = '';
  $('scale-reading').textContent = '';
}

/** Fills the line list and wires the form; `canSave` is false for the quality manager (profiles are the admin's). */
export async function setUpScales(lines: Line[], canSave: boolean): Promise<void> {
  const pick = $<HTMLSelectElement>('sc-line');
  pick.replaceChildren(...lines.map((l) => el('option', { value: String(l.id) }, `${l.code} — ${l.name}`)));
  $<HTMLButtonElement>('scale-save').disabled = !canSave;
  if (lines[0]) await load(lines[0].id);
  pick.onchange = () => void load(Number(pick.value));
  $<HTMLFormElement>('scale-form').onsubmit = async (e) => {
    e.preventDefault();
    try {
      await api('PUT', `/api/lines/${pick.value}/scale`, body());
      await load(Number(pick.value));
      $('scale-saved').textContent = 'Saved.';
    } catch (err) {
      showErrors(err);
    }
  };
  $('scale-try').onclick = async () => {
    const b = body();
    try {
      const { reading } = await api<{ reading: { kind: string; value?: number; unit?: string; inProductUnit?: number | null; reason?: string } }>('POST', `/api/lines/${pick.value}/scale/try`, {
        sample: $<HTMLInputElement>('sc-sample').value,
        pattern: b.pattern,
        unstablePattern: b.unstablePattern,
        defaultUnit: b.defaultUnit,
      });
      clearErrors();
      $('scale-reading').textContent =
        reading.kind === 'weight'
          ? `a weight: ${reading.value} ${reading.unit}${reading.inProductUnit !== null && reading.inProductUnit !== undefined ? ` (${reading.inProductUnit} in the product's unit)` : ''}`
          : reading.kind === 'unstable'
            ? 'an unstable reading: ignored'
            : reading.kind === 'empty'
              ? `the empty platform (${reading.value} ${reading.unit}): ignored`
              : `not read: ${reading.reason}`;
    } catch (err) {
      showErrors(err);
    }
  };
}
