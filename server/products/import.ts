import { parse } from 'csv-parse/sync';
import type { HeftContext } from '../context.js';
import { DomainError } from '../errors.js';
import { productBody } from './contract.js';
import { toFields, type ProductInput } from './fields.js';
import type { ProductFields } from './repository.js';
import type { createProductService } from './service.js';

/** One problem of an imported file: the spreadsheet's row (the header is row 1), the column, and why. */
export interface RowError {
  row: number;
  field: string;
  message: string;
}

/** The columns a product file may have: the product form's field names. */
export const IMPORT_COLUMNS = ['code', 'name', 'nominal', 'unit', 'target', 'subgroupSize', 'samplingMinutes', 'tare', 'windowSize', 'sigma', 'lsl', 'usl', 'entryBasis', 'costPerKg'] as const;
const NUMBERS = new Set(['nominal', 'target', 'subgroupSize', 'samplingMinutes', 'tare', 'windowSize', 'sigma', 'lsl', 'usl', 'costPerKg']);
const REQUIRED = ['code', 'name', 'nominal', 'unit', 'target', 'subgroupSize', 'samplingMinutes'];

/** A cell as a number: a dot or a comma as the decimal mark, no thousands separators; null when it is not one. */
function numberOf(text: string): number | null {
  const t = text.trim();
  if (!/^[-+]?(\d+([.,]\d+)?|[.,]\d+)$/.test(t)) return null;
  return Number(t.replace(',', '.'));
}

/**
 * Reads an RFC 4180 file of products (comma or semicolon separated, told by the header row) into
 * rows of the product form's fields, with every problem named by row and column.
 */
export function readProductFile(text: string): { rows: { row: number; input: ProductInput }[]; errors: RowError[] } {
  const errors: RowError[] = [];
  const firstLine = text.slice(0, text.search(/\r?\n|$/));
  const delimiter = (firstLine.match(/;/g)?.length ?? 0) > (firstLine.match(/,/g)?.length ?? 0) ? ';' : ',';
  let records: string[][];
  try {
    records = parse(text.replace(/^\uFEFF/, ''), { delimiter, relax_column_count: true, skip_empty_lines: true, trim: true }) as string[][];
  } catch (err) {
    const line = (err as { lines?: number }).lines;
    return { rows: [], errors: [{ row: line ?? 1, field: 'file', message: `not a CSV file: ${(err as Error).message}` }] };
  }
  const [header, ...body] = records;
  if (!header) return { rows: [], errors: [{ row: 1, field: 'file', message: 'empty: the first row must name the columns' }] };
  header.forEach((name, i) => {
    if (!(IMPORT_COLUMNS as readonly string[]).includes(name)) errors.push({ row: 1, field: name || `column ${i + 1}`, message: `not a product field (use ${IMPORT_COLUMNS.join(', ')})` });
  });
  for (const name of REQUIRED) if (!header.includes(name)) errors.push({ row: 1, field: name, message: 'this column is needed' });
  if (errors.length > 0) return { rows: [], errors };
  const rows: { row: number; input: ProductInput }[] = [];
  const seen = new Map<string, number>();
  body.forEach((cells, index) => {
    const row = index + 2;
    if (cells.length !== header.length) errors.push({ row, field: 'row', message: `has ${cells.length} cells where the header has ${header.length}` });
    const raw: Record<string, unknown> = {};
    header.forEach((name, i) => {
      const cell = cells[i] ?? '';
      if (cell === '') return; // not given: optional fields keep their default (or, on update, their value)
      if (!NUMBERS.has(name)) raw[name] = cell;
      else {
        const n = numberOf(cell);
        if (n === null) errors.push({ row, field: name, message: `"${cell}" is not a number` });
        else raw[name] = n;
      }
    });
    const parsed = productBody.safeParse(raw);
    if (!parsed.success) {
      for (const issue of parsed.error.issues) if (!errors.some((e) => e.row === row && e.field === String(issue.path[0]))) errors.push({ row, field: issue.path.join('.') || 'row', message: issue.message });
      return;
    }
    const code = parsed.data.code;
    const earlier = seen.get(code);
    if (earlier !== undefined) errors.push({ row, field: 'code', message: `${code} is on row ${earlier} already` });
    seen.set(code, row);
    try {
      toFields(parsed.data);
    } catch (err) {
      if (!(err instanceof DomainError)) throw err;
      for (const i of err.issues) errors.push({ row, field: i.field, message: i.message });
      return;
    }
    rows.push({ row, input: parsed.data });
  });
  return { rows, errors };
}

/**
 * Imports a product file whole or not at all: any bad row refuses the file (422, every bad row
 * and field named) and nothing is written. An existing code is changed only in `update` mode.
 */
export function importProducts(ctx: Pick<HeftContext, 'db' | 'repos'>, service: ReturnType<typeof createProductService>, text: string, mode: 'create' | 'update', actor: string) {
  const { rows, errors } = readProductFile(text);
  const existing = new Map(rows.map((r) => [r.input.code, ctx.repos.products.getByCode(r.input.code)]));
  for (const r of rows) {
    if (mode === 'create' && existing.get(r.input.code)) errors.push({ row: r.row, field: 'code', message: `${r.input.code} exists already: send mode=update to change it` });
  }
  if (errors.length === 0 && rows.length === 0) errors.push({ row: 2, field: 'file', message: 'no products in the file' });
  if (errors.length > 0) {
    errors.sort((a, b) => a.row - b.row);
    const rowsWrong = new Set(errors.map((e) => e.row)).size;
    throw new DomainError(422, 'bad-rows', `${rowsWrong} row${rowsWrong === 1 ? '' : 's'} of the file cannot be taken, so none was: ${errors[0]?.field} on row ${errors[0]?.row}: ${errors[0]?.message}`, [], { errors });
  }
  const outcome = { created: [] as string[], updated: [] as string[] };
  ctx.db.transaction(() => {
    for (const r of rows) {
      const before = existing.get(r.input.code);
      if (before) {
        service.update(before.id, (before) => toFields(r.input, before as ProductFields), (p) => p, actor);
        outcome.updated.push(r.input.code);
      } else {
        service.create(toFields(r.input), actor);
        outcome.created.push(r.input.code);
      }
    }
  }).immediate();
  return outcome;
}
