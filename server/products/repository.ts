import type { Db } from '../db/database.js';
import type { RuleSetOverrides } from '../stats/rule-set.js';
import { netQuantityLimits } from '../stats/tne.js';

export type Unit = 'g' | 'kg';
export type Basis = 'net' | 'gross';

export interface ProductFields {
  code: string;
  name: string;
  nominal: number;
  unit: Unit;
  target: number;
  tare: number;
  subgroupSize: number;
  samplingMinutes: number;
  windowSize: number;
  sigma: number | null;
  lsl: number | null;
  usl: number | null;
  entryBasis: Basis;
  costPerKg: number | null;
  rules: RuleSetOverrides;
}

export interface Product extends ProductFields {
  id: number;
  /** From the TNE table; null for a nominal outside it (below 5 g or above 50 kg). */
  tne: number | null;
  t1: number | null;
  t2: number | null;
  updatedAt: number;
}

interface ProductRow {
  id: number;
  code: string;
  name: string;
  nominal: number;
  unit: Unit;
  target: number;
  tare: number;
  subgroup_size: number;
  sampling_minutes: number;
  window_size: number;
  sigma: number | null;
  lsl: number | null;
  usl: number | null;
  entry_basis: Basis;
  cost_per_kg: number | null;
  rules: string;
  updated_at: number;
}

function toProduct(row: ProductRow): Product {
  const limits = netQuantityLimits(row.nominal, row.unit);
  return {
    id: row.id,
    code: row.code,
    name: row.name,
    nominal: row.nominal,
    unit: row.unit,
    target: row.target,
    tare: row.tare,
    subgroupSize: row.subgroup_size,
    samplingMinutes: row.sampling_minutes,
    windowSize: row.window_size,
    sigma: row.sigma,
    lsl: row.lsl,
    usl: row.usl,
    entryBasis: row.entry_basis,
    costPerKg: row.cost_per_kg,
    rules: JSON.parse(row.rules) as RuleSetOverrides,
    tne: limits?.tne ?? null,
    t1: limits?.t1 ?? null,
    t2: limits?.t2 ?? null,
    updatedAt: row.updated_at,
  };
}

function toParams(p: ProductFields, at: number) {
  return {
    code: p.code,
    name: p.name,
    nominal: p.nominal,
    unit: p.unit,
    target: p.target,
    tare: p.tare,
    subgroupSize: p.subgroupSize,
    samplingMinutes: p.samplingMinutes,
    windowSize: p.windowSize,
    sigma: p.sigma,
    lsl: p.lsl,
    usl: p.usl,
    entryBasis: p.entryBasis,
    costPerKg: p.costPerKg,
    rules: JSON.stringify(p.rules),
    at,
  };
}

export function createProductRepository(db: Db) {
  const byId = db.prepare('SELECT * FROM products WHERE id = ?');
  const byCode = db.prepare('SELECT * FROM products WHERE code = ?');
  const all = db.prepare('SELECT * FROM products ORDER BY code');
  const insert = db.prepare(
    `INSERT INTO products (code, name, nominal, unit, target, tare, subgroup_size, sampling_minutes, window_size,
       sigma, lsl, usl, entry_basis, cost_per_kg, rules, created_at, updated_at)
     VALUES (@code, @name, @nominal, @unit, @target, @tare, @subgroupSize, @samplingMinutes, @windowSize,
       @sigma, @lsl, @usl, @entryBasis, @costPerKg, @rules, @at, @at)`,
  );
  const update = db.prepare(
    `UPDATE products SET code = @code, name = @name, nominal = @nominal, unit = @unit, target = @target, tare = @tare,
       subgroup_size = @subgroupSize, sampling_minutes = @samplingMinutes, window_size = @windowSize, sigma = @sigma,
       lsl = @lsl, usl = @usl, entry_basis = @entryBasis, cost_per_kg = @costPerKg, rules = @rules, updated_at = @at
     WHERE id = @id`,
  );
  return {
    get(id: number): Product | null {
      const row = byId.get(id) as ProductRow | undefined;
      return row ? toProduct(row) : null;
    },
    getByCode(code: string): Product | null {
      const row = byCode.get(code) as ProductRow | undefined;
      return row ? toProduct(row) : null;
    },
    list(): Product[] {
      return (all.all() as ProductRow[]).map(toProduct);
    },
    create(fields: ProductFields, at: number): Product {
      const id = Number(insert.run(toParams(fields, at)).lastInsertRowid);
      return this.get(id) as Product;
    },
    update(id: number, fields: ProductFields, at: number): Product {
      update.run({ ...toParams(fields, at), id });
      return this.get(id) as Product;
    },
  };
}

export type ProductRepository = ReturnType<typeof createProductRepository>;
