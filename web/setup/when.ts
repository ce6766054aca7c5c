/** Times on the set-up page, in the plant's time zone like the other pages ("3 Dec 2026, 14:05"). */
let zone: string | undefined;

/** Called once the plant is known; until then the browser's zone is used. */
export function usePlantZone(timeZone: string): void {
  zone = timeZone;
}

export function when(iso: string | null, none = '—'): string {
  return iso ? new Date(iso).toLocaleString('en-GB', { dateStyle: 'medium', timeStyle: 'short', timeZone: zone }) : none;
}
