/**
 * The demo plant: invented from end to end. Kestrel Vale Foods packs oats, coffee and rice at its
 * Brackwater site on three lines; each line's fill process and scripted incidents are set here.
 */

export const PLANT = { name: 'Kestrel Vale Foods — Brackwater site', timeZone: 'Europe/London' };

export interface DemoProduct {
  code: string;
  name: string;
  nominal: number;
  unit: 'g' | 'kg';
  target: number;
  sigma: number;
  subgroupSize: number;
  samplingMinutes: number;
  tare: number;
  entryBasis: 'net' | 'gross';
  costPerKg: number;
  lsl?: number;
  usl?: number;
}

export const PRODUCTS: DemoProduct[] = [
  { code: 'OAT-500', name: 'Rolled oats, 500 g bag', nominal: 500, unit: 'g', target: 504, sigma: 2.2, subgroupSize: 5, samplingMinutes: 60, tare: 6.5, entryBasis: 'net', costPerKg: 1.9 },
  { code: 'COF-250', name: 'Ground coffee, 250 g pack', nominal: 250, unit: 'g', target: 253, sigma: 1.1, subgroupSize: 5, samplingMinutes: 60, tare: 11.2, entryBasis: 'gross', costPerKg: 14.5 },
  { code: 'RIC-1K', name: 'Long-grain rice, 1 kg pouch', nominal: 1, unit: 'kg', target: 1.009, sigma: 0.0035, subgroupSize: 5, samplingMinutes: 60, tare: 0.012, entryBasis: 'net', costPerKg: 2.4 },
  { code: 'RIC-1K-BR', name: 'Brown rice, 1 kg pouch', nominal: 1, unit: 'kg', target: 1.009, sigma: 0.0035, subgroupSize: 5, samplingMinutes: 60, tare: 0.012, entryBasis: 'net', costPerKg: 2.9 },
];

/** Oats and coffee run round the clock (continuous); the rice line works the plant calendar's shifts. */
export const LINES = [
  { code: 'L1', name: 'Line 1 — oats', product: 'OAT-500', packsPerHour: 1800, continuous: true },
  { code: 'L2', name: 'Line 2 — coffee', product: 'COF-250', packsPerHour: 2400, continuous: true },
  { code: 'L3', name: 'Line 3 — rice', product: 'RIC-1K', packsPerHour: 900, continuous: false },
];

/** The plant calendar: an early and a late shift on weekdays; nights and the weekend are off. */
export const CALENDAR = {
  shifts: [
    { name: 'early', starts: '06:00', ends: '14:00', days: [1, 2, 3, 4, 5] },
    { name: 'late', starts: '14:00', ends: '22:00', days: [1, 2, 3, 4, 5] },
  ],
  closedDays: [] as { date: string; note?: string }[],
};

/** People of the demo plant; their PINs are not printed (only the four demo users sign in). */
export const PEOPLE = {
  operators: ['hana.mirek', 'jon.eddowes', 'sade.obi'],
  supervisors: ['pat.quillan', 'ines.bravo'],
};

/** Hours from the start of the history at which each scripted incident happens. */
export const INCIDENTS = {
  /** Line 1: the filler's mean steps up by 1.5σ. */
  stepShift: { line: 'L1', fromHour: 8 * 24 + 9, toHour: 8 * 24 + 17, shiftSigma: 1.5, cause: 'auger screw worn on filler head 3', action: 'auger replaced and target re-set' },
  /** Line 2: the dose creeps down, 0.12σ an hour, until someone acts. */
  drift: { line: 'L2', fromHour: 4 * 24 + 6, perHourSigma: -0.12, cause: 'dosing valve drifting as the hopper emptied', action: 'valve recalibrated; hopper level alarm set' },
  /**
   * Line 3: changeover to brown rice, whose spread is 1.9 times as wide, at the start of the late
   * shift on the first working day from day 9 on (the rice line works shifts), for the whole shift.
   */
  spreadAfterChangeover: { line: 'L3', fromDay: 9, localHour: 14, hours: 8, product: 'RIC-1K-BR', spreadFactor: 1.9, cause: 'brown rice flows unevenly through the weigher', action: 'vibrator feed rate raised' },
  /** Line 2: two hourly checks are missed. */
  missedCheck: { line: 'L2', hours: [10 * 24 + 13, 10 * 24 + 14] },
  /** Line 1: one pack far under weight (below T2). */
  packBelowT2: { line: 'L1', hour: 11 * 24 + 4, cause: 'bag split on the jaw and was weighed half-empty', action: 'jaw seal cleaned; bag destroyed' },
};

export const HISTORY_DAYS = 14;
export const DEMO_SEED = 4217;

export const DEMO_USERS = [
  { username: 'operator', displayName: 'Demo operator', role: 'operator' as const, secret: '1111' },
  { username: 'supervisor', displayName: 'Demo supervisor', role: 'supervisor' as const, secret: '2222' },
  { username: 'quality', displayName: 'Demo quality manager', role: 'quality' as const, secret: 'quality-demo-3333' },
  { username: 'admin', displayName: 'Demo admin', role: 'admin' as const, secret: 'admin-demo-4444' },
];
