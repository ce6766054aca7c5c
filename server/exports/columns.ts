import type Database from 'better-sqlite3';
import { localStamp } from '../shared/time-zone.js';
import { inferFromMoments } from '../stats/sample-summary.js';

export type ExportKind = 'events' | 'checks' | 'packs';

interface Range {
  from: number;
  to: number;
  lineId: number | null;
}

type Row = Record<string, string | number | boolean | null>;

interface ExportSpec {
  /** Column names in order; README's "Exports" section documents each. */
  columns: string[];
  rows(db: Database.Database, range: Range, timeZone: string): Iterable<Row>;
}

/** What a spreadsheet would start a formula with when it leads a cell (OWASP, "CSV Injection"). */
const FORMULA_LEAD = /^[=+\-@\t\r]/;

/**
 * A text cell as a spreadsheet will only ever show it: one that would start a formula gets a leading
 * apostrophe (OWASP's advice for CSV injection). Numbers never pass through here, so they stay numbers.
 */
export function spreadsheetSafe(text: string): string {
  return FORMULA_LEAD.test(text) ? `'${text}` : text;
}

const iso = (ms: number | null) => (ms === null ? null : new Date(ms).toISOString());
const local = (ms: number | null, tz: string) => (ms === null ? null : localStamp(ms, tz));

const EVENTS_SQL = `SELECT a.*, l.code AS line_code, p.code AS product_code FROM alerts a
  JOIN lines l ON l.id = a.line_id LEFT JOIN runs r ON r.id = a.run_id LEFT JOIN products p ON p.id = r.product_id
  WHERE a.opened_at >= @from AND a.opened_at < @to AND (@lineId IS NULL OR a.line_id = @lineId) ORDER BY a.opened_at, a.id`;

// a check is named by the product's settings version in force when it was taken (its code may have changed since)
const CHECKS_SQL = `SELECT c.*, l.code AS line_code, COALESCE(v.code, p.code) AS product_code, COALESCE(v.unit, p.unit) AS unit,
    COALESCE(v.version, 1) AS product_version FROM checks c
  JOIN lines l ON l.id = c.line_id JOIN products p ON p.id = c.product_id
  LEFT JOIN product_versions v ON v.product_id = c.product_id AND v.version = (SELECT w.version FROM product_versions w
    WHERE w.product_id = c.product_id AND (w.valid_from <= c.taken_at OR w.version = 1) ORDER BY w.valid_from <= c.taken_at DESC, w.version DESC LIMIT 1)
  WHERE c.taken_at >= @from AND c.taken_at < @to AND (@lineId IS NULL OR c.line_id = @lineId) ORDER BY c.taken_at, c.id`;

const PACKS_SQL = `SELECT c.id AS check_id, c.taken_at, c.revision, c.superseded_by, k.position, k.net, k.gross, l.code AS line_code,
    COALESCE(v.code, p.code) AS product_code, COALESCE(v.unit, p.unit) AS unit, COALESCE(v.nominal, p.nominal) AS nominal,
    COALESCE(v.unit, p.unit) AS product_unit
  FROM packs k JOIN checks c ON c.id = k.check_id JOIN lines l ON l.id = c.line_id JOIN products p ON p.id = c.product_id
  LEFT JOIN product_versions v ON v.product_id = c.product_id AND v.version = (SELECT w.version FROM product_versions w
    WHERE w.product_id = c.product_id AND (w.valid_from <= c.taken_at OR w.version = 1) ORDER BY w.valid_from <= c.taken_at DESC, w.version DESC LIMIT 1)
  WHERE c.taken_at >= @from AND c.taken_at < @to AND (@lineId IS NULL OR c.line_id = @lineId) ORDER BY c.taken_at, c.id, k.position`;

export const EXPORTS: Record<ExportKind, ExportSpec> = {
  events: {
    columns: [
      'alert_id', 'line', 'product', 'kind', 'direction', 'severity', 'state', 'rules',
      'opened_at_utc', 'opened_at_local', 'onset_at_utc', 'onset_at_local', 'onset_check_id', 'change_point_at_utc', 'change_point_check_id',
      'size', 'size_sigma', 'acknowledged_at_utc', 'acknowledged_at_local', 'acknowledged_by', 'acknowledge_note',
      'resolved_at_utc', 'resolved_at_local', 'resolved_by', 'cause', 'action', 'minutes_to_acknowledge', 'minutes_to_resolve',
    ],
    *rows(db, range, tz) {
      for (const a of db.prepare(EVENTS_SQL).iterate(range) as Iterable<Record<string, number | string | null>>) {
        const opened = a.opened_at as number;
        const acked = a.acknowledged_at as number | null;
        const resolved = a.resolved_at as number | null;
        yield {
          alert_id: a.id as number,
          line: a.line_code as string,
          product: (a.product_code as string | null) ?? null,
          kind: a.kind as string,
          direction: a.direction as string | null,
          severity: a.severity as string,
          state: a.state as string,
          rules: (JSON.parse(a.rules as string) as string[]).join(' '),
          opened_at_utc: iso(opened),
          opened_at_local: local(opened, tz),
          onset_at_utc: iso(a.onset_at as number | null),
          onset_at_local: local(a.onset_at as number | null, tz),
          onset_check_id: a.onset_check_id as number | null,
          change_point_at_utc: iso(a.change_point_at as number | null),
          change_point_check_id: a.change_point_check_id as number | null,
          size: a.size_unit as number | null,
          size_sigma: a.size_sigma as number | null,
          acknowledged_at_utc: iso(acked),
          acknowledged_at_local: local(acked, tz),
          acknowledged_by: a.acknowledged_by as string | null,
          acknowledge_note: a.acknowledge_note as string | null,
          resolved_at_utc: iso(resolved),
          resolved_at_local: local(resolved, tz),
          resolved_by: a.resolved_by as string | null,
          cause: a.cause as string | null,
          action: a.action as string | null,
          minutes_to_acknowledge: acked === null ? null : (acked - opened) / 60_000,
          minutes_to_resolve: resolved === null ? null : (resolved - opened) / 60_000,
        };
      }
    },
  },
  checks: {
    columns: [
      'check_id', 'line', 'product', 'product_version', 'unit', 'taken_at_utc', 'taken_at_local', 'recorded_at_utc', 'basis', 'n', 'mean', 'sd', 'range', 'se', 't', 'df', 'p',
      'ci95_low', 'ci95_high', 'target', 'below_t1', 'below_t2', 'revision', 'revises_check_id', 'superseded_by', 'revision_reason', 'entered_by', 'source', 'note',
    ],
    *rows(db, range, tz) {
      for (const c of db.prepare(CHECKS_SQL).iterate(range) as Iterable<Record<string, number | string | null>>) {
        const inf = inferFromMoments(c.n as number, c.mean as number, c.sd as number | null, c.target as number);
        yield {
          check_id: c.id as number,
          line: c.line_code as string,
          product: c.product_code as string,
          product_version: c.product_version as number,
          unit: c.unit as string,
          taken_at_utc: iso(c.taken_at as number),
          taken_at_local: local(c.taken_at as number, tz),
          recorded_at_utc: iso(c.recorded_at as number),
          basis: c.basis as string,
          n: c.n as number,
          mean: c.mean as number,
          sd: c.sd as number | null,
          range: c.range as number,
          se: inf.se,
          t: inf.t,
          df: inf.df,
          p: inf.p,
          ci95_low: inf.ci95?.[0] ?? null,
          ci95_high: inf.ci95?.[1] ?? null,
          target: c.target as number,
          below_t1: c.below_t1 as number,
          below_t2: c.below_t2 as number,
          revision: c.revision as number,
          revises_check_id: c.revises_check_id as number | null,
          superseded_by: c.superseded_by as number | null,
          revision_reason: c.revision_reason as string | null,
          entered_by: c.entered_by as string | null,
          source: c.source as string,
          note: c.note as string | null,
        };
      }
    },
  },
  packs: {
    columns: ['check_id', 'line', 'product', 'unit', 'taken_at_utc', 'taken_at_local', 'position', 'net', 'gross', 'current'],
    *rows(db, range, tz) {
      for (const k of db.prepare(PACKS_SQL).iterate(range) as Iterable<Record<string, number | string | null>>) {
        yield {
          check_id: k.check_id as number,
          line: k.line_code as string,
          product: k.product_code as string,
          unit: k.unit as string,
          taken_at_utc: iso(k.taken_at as number),
          taken_at_local: local(k.taken_at as number, tz),
          position: (k.position as number) + 1,
          net: k.net as number,
          gross: k.gross as number | null,
          current: k.superseded_by === null,
        };
      }
    },
  },
};
