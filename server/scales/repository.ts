import type { Db } from '../db/database.js';
import type { ScaleUnit } from './reading.js';

export interface ScaleProfile {
  connection: 'web-serial' | 'bridge';
  baudRate: number;
  dataBits: 7 | 8;
  parity: 'none' | 'even' | 'odd';
  stopBits: 1 | 2;
  lineEnding: 'cr' | 'lf' | 'crlf';
  pattern: string | null;
  unstablePattern: string | null;
  defaultUnit: ScaleUnit;
  sendOnLast: boolean;
}

export interface StoredScaleProfile extends ScaleProfile {
  lineId: number;
  updatedAt: number;
  updatedBy: string;
}

/** A line without a profile of its own reads its scale this way. */
export const DEFAULT_SCALE_PROFILE: ScaleProfile = {
  connection: 'web-serial',
  baudRate: 9600,
  dataBits: 8,
  parity: 'none',
  stopBits: 1,
  lineEnding: 'crlf',
  pattern: null,
  unstablePattern: null,
  defaultUnit: 'g',
  sendOnLast: true,
};

interface Row {
  line_id: number;
  connection: ScaleProfile['connection'];
  baud_rate: number;
  data_bits: 7 | 8;
  parity: ScaleProfile['parity'];
  stop_bits: 1 | 2;
  line_ending: ScaleProfile['lineEnding'];
  pattern: string | null;
  unstable_pattern: string | null;
  default_unit: ScaleUnit;
  send_on_last: number;
  updated_at: number;
  updated_by: string;
}

export function createScaleRepository(db: Db) {
  const byLine = db.prepare('SELECT * FROM scale_profiles WHERE line_id = ?');
  const upsert = db.prepare(
    `INSERT INTO scale_profiles (line_id, connection, baud_rate, data_bits, parity, stop_bits, line_ending, pattern, unstable_pattern, default_unit, send_on_last, updated_at, updated_by)
     VALUES (@lineId, @connection, @baudRate, @dataBits, @parity, @stopBits, @lineEnding, @pattern, @unstablePattern, @defaultUnit, @sendOnLast, @at, @actor)
     ON CONFLICT (line_id) DO UPDATE SET connection = excluded.connection, baud_rate = excluded.baud_rate, data_bits = excluded.data_bits,
       parity = excluded.parity, stop_bits = excluded.stop_bits, line_ending = excluded.line_ending, pattern = excluded.pattern,
       unstable_pattern = excluded.unstable_pattern, default_unit = excluded.default_unit, send_on_last = excluded.send_on_last,
       updated_at = excluded.updated_at, updated_by = excluded.updated_by`,
  );
  return {
    get(lineId: number): StoredScaleProfile | null {
      const r = byLine.get(lineId) as Row | undefined;
      if (!r) return null;
      return {
        lineId: r.line_id,
        connection: r.connection,
        baudRate: r.baud_rate,
        dataBits: r.data_bits,
        parity: r.parity,
        stopBits: r.stop_bits,
        lineEnding: r.line_ending,
        pattern: r.pattern,
        unstablePattern: r.unstable_pattern,
        defaultUnit: r.default_unit,
        sendOnLast: r.send_on_last === 1,
        updatedAt: r.updated_at,
        updatedBy: r.updated_by,
      };
    },
    put(lineId: number, profile: ScaleProfile, at: number, actor: string): void {
      upsert.run({ ...profile, lineId, sendOnLast: profile.sendOnLast ? 1 : 0, at, actor });
    },
  };
}

export type ScaleRepository = ReturnType<typeof createScaleRepository>;
