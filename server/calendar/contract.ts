import { z } from 'zod';
import { freeText } from '../shared/schemas.js';

/** What the calendar routes take and answer. */

const hhmm = z.string().regex(/^([01]\d|2[0-3]):[0-5]\d$/, 'a plant-local time HH:MM');
const shift = z.strictObject({
  name: freeText(50),
  starts: hhmm,
  /** At or before `starts`: the shift runs past midnight into the next day. */
  ends: hhmm,
  /** ISO weekdays the shift starts on, 1 = Monday … 7 = Sunday. */
  days: z.array(z.number().int().min(1).max(7)).min(1).max(7),
});
const closedDay = z.strictObject({ date: z.iso.date(), note: freeText(200).nullable().optional() });

export const calendarBody = z.strictObject({ shifts: z.array(shift).max(20), closedDays: z.array(closedDay).max(2000) });

export const calendarAnswer = z.strictObject({
  calendar: z.strictObject({
    shifts: z.array(shift),
    closedDays: z.array(z.strictObject({ date: z.string(), note: z.string().nullable() })),
    /** The shift the plant is in now (null between shifts, or with no shifts set: then the calendar stops nothing). */
    inShift: z.string().nullable(),
  }),
});
