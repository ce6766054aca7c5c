import { DomainError } from '../errors.js';
import { lastWeek, localDaysToUtc } from '../shared/time-zone.js';

/** The range a review or an export covers: given instants, given plant-local days, or last week. */
export function resolveRange(q: { from?: number; to?: number; fromDate?: string; toDate?: string }, now: number, timeZone: string): { from: number; to: number } {
  const byTime = q.from !== undefined || q.to !== undefined;
  const byDate = q.fromDate !== undefined || q.toDate !== undefined;
  if (byTime && byDate) throw new DomainError(400, 'bad-request', 'fromDate: give from/to or fromDate/toDate, not both', [{ field: 'fromDate', message: 'give from/to or fromDate/toDate, not both' }]);
  const week = lastWeek(now, timeZone);
  let range = week;
  if (byDate) {
    if (q.fromDate === undefined || q.toDate === undefined) throw new DomainError(400, 'bad-request', 'toDate: fromDate and toDate go together', [{ field: q.fromDate === undefined ? 'fromDate' : 'toDate', message: 'fromDate and toDate go together' }]);
    range = localDaysToUtc(q.fromDate, q.toDate, timeZone);
  } else if (byTime) {
    range = { from: q.from ?? week.from, to: q.to ?? week.to };
  }
  if (range.to <= range.from) throw new DomainError(400, 'bad-request', 'to: must be after from', [{ field: 'to', message: 'must be after from' }]);
  return range;
}
