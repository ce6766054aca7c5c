import { describe, expect } from 'vitest';
import { countRows, heftTest, type TestApp } from '../helpers.js';

const importCsv = (t: TestApp, csv: string, mode?: 'update', cookie = t.cookies.admin) =>
  t.app.inject({ method: 'POST', url: `/api/products/import${mode ? `?mode=${mode}` : ''}`, headers: { cookie, 'content-type': 'text/csv' }, payload: csv });

const HEADER = 'code,name,nominal,unit,target,subgroupSize,samplingMinutes,sigma,entryBasis';

describe('products from a spreadsheet', () => {
  heftTest('when a file has one bad row, then it is refused whole with that row and field named, and accepted once fixed', async ({ heft: t }) => {
    const bad = [HEADER, 'OAT-1,Oats 1 kg,1000,g,1008,5,60,3.5,net', 'OAT-2,Oats 2 kg,2000,g,two thousand,5,60,,net', 'OAT-3,Oats 3 kg,3000,g,3010,5,60,,gross'].join('\r\n');
    const refused = await importCsv(t, bad);
    expect(refused.statusCode).toBe(422);
    expect(refused.json().errors).toEqual([{ row: 3, field: 'target', message: '"two thousand" is not a number' }]);
    expect(countRows(t.db, 'products')).toBe(0);
    const fixed = await importCsv(t, bad.replace('two thousand', '2012'));
    expect(fixed.statusCode).toBe(201);
    expect(fixed.json()).toEqual({ created: ['OAT-1', 'OAT-2', 'OAT-3'], updated: [] });
    const products = (await t.app.inject({ method: 'GET', url: '/api/products', headers: { cookie: t.cookies.operator } })).json().products;
    expect(products.map((p: { code: string; target: number; sigma: number | null; entryBasis: string }) => [p.code, p.target, p.sigma, p.entryBasis])).toEqual([
      ['OAT-1', 1008, 3.5, 'net'],
      ['OAT-2', 2012, null, 'net'],
      ['OAT-3', 3010, null, 'gross'],
    ]);
    // each product created is in the audit trail
    expect(t.db.prepare("SELECT COUNT(*) AS n FROM audit WHERE action = 'product.create'").get()).toEqual({ n: 3 });
  });

  heftTest('when every row has problems, then each is named, row by row and field by field', async ({ heft: t }) => {
    const csv = [HEADER, 'A,Bag,500,lb,503,5,60,,net', 'B,Bag,500,g,503,0,60,,net', 'A,Bag again,500,g,503,5,60,,sideways', 'C,Bag,500,g,1200,5,60,,net'].join('\n');
    const res = await importCsv(t, csv);
    expect(res.statusCode).toBe(422);
    const errors = res.json().errors as { row: number; field: string }[];
    expect(errors.map((e) => [e.row, e.field])).toEqual([
      [2, 'unit'],
      [3, 'subgroupSize'],
      [4, 'entryBasis'],
      [5, 'target'],
    ]);
    expect(countRows(t.db, 'products')).toBe(0);
  });

  heftTest('when a file is semicolon separated with decimal commas, then the commas are decimal marks', async ({ heft: t }) => {
    const csv = ['code;name;nominal;unit;target;subgroupSize;samplingMinutes;sigma;costPerKg', 'RIC-1K;"Rice; long grain";1;kg;1,009;5;60;0,0035;2,4'].join('\n');
    const res = await importCsv(t, csv);
    expect(res.statusCode).toBe(201);
    const p = (await t.app.inject({ method: 'GET', url: '/api/products/1', headers: { cookie: t.cookies.operator } })).json().product;
    expect([p.name, p.target, p.sigma, p.costPerKg]).toEqual(['Rice; long grain', 1.009, 0.0035, 2.4]);
    // a comma-separated file may carry a decimal comma in quotes (RFC 4180)
    const quoted = [HEADER, 'COF-250,Coffee,250,g,"253,5",5,60,"1,1",gross'].join('\n');
    expect((await importCsv(t, quoted)).statusCode).toBe(201);
    const coffee = (await t.app.inject({ method: 'GET', url: '/api/products/2', headers: { cookie: t.cookies.operator } })).json().product;
    expect([coffee.target, coffee.sigma]).toEqual([253.5, 1.1]);
  });

  heftTest('when a code exists already, then it is refused unless the request says mode=update, and then it is changed', async ({ heft: t }) => {
    await importCsv(t, [HEADER, 'OAT-1,Oats,1000,g,1008,5,60,3.5,net'].join('\n'));
    const again = [HEADER, 'OAT-1,Oats (new bag),1000,g,1006,5,60,3.2,net', 'OAT-9,Oats 9,900,g,905,5,60,,net'].join('\n');
    const refused = await importCsv(t, again);
    expect([refused.statusCode, refused.json().errors]).toEqual([422, [{ row: 2, field: 'code', message: 'OAT-1 exists already: send mode=update to change it' }]]);
    expect(countRows(t.db, 'products')).toBe(1);
    const updated = await importCsv(t, again, 'update');
    expect(updated.json()).toEqual({ created: ['OAT-9'], updated: ['OAT-1'] });
    const p = (await t.app.inject({ method: 'GET', url: '/api/products/1', headers: { cookie: t.cookies.operator } })).json().product;
    expect([p.name, p.target, p.sigma, p.version]).toEqual(['Oats (new bag)', 1006, 3.2, 2]);
  });

  heftTest('when a supervisor imports, or the file has an unknown column, then it is refused', async ({ heft: t }) => {
    expect((await importCsv(t, [HEADER, 'A,Bag,500,g,503,5,60,,net'].join('\n'), undefined, t.cookies.supervisor)).statusCode).toBe(403);
    const odd = await importCsv(t, `${HEADER},colour\nA,Bag,500,g,503,5,60,,net,red`);
    expect([odd.statusCode, odd.json().errors[0].field]).toEqual([422, 'colour']);
    expect(countRows(t.db, 'products')).toBe(0);
  });

  heftTest('when 5,000 products are imported, then it takes under a second', async ({ heft: t }) => {
    const rows = Array.from({ length: 5000 }, (_, i) => `P-${i},Product ${i},500,g,503,5,60,2,net`);
    const started = performance.now();
    const res = await importCsv(t, [HEADER, ...rows].join('\n'));
    const ms = performance.now() - started;
    console.log(`import: 5,000 products in ${ms.toFixed(0)} ms`);
    expect(res.statusCode).toBe(201);
    expect(countRows(t.db, 'products')).toBe(5000);
    expect(ms).toBeLessThan(1000);
  });
});
