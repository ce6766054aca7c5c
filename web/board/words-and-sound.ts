import type { Alert } from '../shared/api.js';
import { duration, weight } from '../shared/format.js';

/** An alert's size as the board shows it: signed, in the product's unit and in σ. */
export function shiftSizeWords(a: Pick<Alert, 'size'>, unit: 'g' | 'kg'): string {
  if (!a.size) return '';
  const sign = a.size.unit > 0 ? '+' : '−';
  const sigma = a.size.sigma === null ? '' : ` (${sign}${Math.abs(a.size.sigma).toFixed(1)}σ)`;
  return `${sign}${weight(Math.abs(a.size.unit), unit)}${sigma}`;
}

/** The board's sound for a new alert: two short falling tones, only when the wall has sound on. */
export function twoToneChime(): void {
  const ctx = new AudioContext();
  for (const [start, freq] of [
    [0, 880],
    [0.35, 660],
  ] as const) {
    const osc = ctx.createOscillator();
    const gain = ctx.createGain();
    osc.frequency.value = freq;
    gain.gain.value = 0.2;
    osc.connect(gain).connect(ctx.destination);
    osc.start(ctx.currentTime + start);
    osc.stop(ctx.currentTime + start + 0.25);
  }
}

/** When the line's next check is due, in words, and whether it is late. */
export function dueWords(due: string | null | undefined): { text: string; late: boolean } {
  if (!due) return { text: '', late: false };
  const left = Date.parse(due) - Date.now();
  return left >= 0 ? { text: `next check in ${duration(left)}`, late: false } : { text: `check overdue by ${duration(-left)}`, late: true };
}
