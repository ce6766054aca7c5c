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
  /** The settings version in force now (1 at creation, + 1 for every change of a setting). */
  version: number;
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
  version: number;
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
    version: row.version,
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

/** A product's settings as they were from `validFrom` until the next version. */
export interface ProductVersion {
  version: number;
  validFrom: number;
  product: Product;
}

interface VersionRow extends Omit<ProductRow, 'id' | 'updated_at' | 'version'> {
  product_id: number;
  version: number;
  valid_from: number;
}

const versionOf = (r: VersionRow): ProductVersion => ({
  version: r.version,
  validFrom: r.valid_from,
  product: toProduct({ ...r, id: r.product_id, updated_at: r.valid_from, version: r.version }),
});

const SETTINGS = ['code', 'name', 'nominal', 'unit', 'target', 'tare', 'subgroupSize', 'samplingMinutes', 'windowSize', 'sigma', 'lsl', 'usl', 'entryBasis', 'costPerKg', 'rules'] as const;
const sameSettings = (a: ProductFields, b: ProductFields) => SETTINGS.every((k) => JSON.stringify(a[k]) === JSON.stringify(b[k]));

export function createProductRepository(db: Db) {
  const withVersion = 'SELECT p.*, COALESCE((SELECT MAX(version) FROM product_versions v WHERE v.product_id = p.id), 1) AS version FROM products p';
  const byId = db.prepare(`${withVersion} WHERE p.id = ?`);
  const byCode = db.prepare(`${withVersion} WHERE p.code = ?`);
  const all = db.prepare(`${withVersion} ORDER BY p.code`);
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
  const insertVersion = db.prepare(
    `INSERT INTO product_versions (product_id, version, valid_from, code, name, nominal, unit, target, tare, subgroup_size,
       sampling_minutes, window_size, sigma, lsl, usl, entry_basis, cost_per_kg, rules)
     VALUES (@id, (SELECT COALESCE(MAX(version), 0) + 1 FROM product_versions WHERE product_id = @id), @at, @code, @name,
       @nominal, @unit, @target, @tare, @subgroupSize, @samplingMinutes, @windowSize, @sigma, @lsl, @usl, @entryBasis,
       @costPerKg, @rules)`,
  );
  // before the first version's time (history loaded from elsewhere) the first version holds
  const versionAt = db.prepare(
    `SELECT * FROM product_versions WHERE product_id = @id AND (valid_from <= @at OR version = 1)
     ORDER BY valid_from <= @at DESC, version DESC LIMIT 1`,
  );
  const versionsAfter = db.prepare('SELECT * FROM product_versions WHERE product_id = @id AND valid_from > @from AND valid_from < @to ORDER BY version');
  const allVersions = db.prepare('SELECT * FROM product_versions WHERE product_id = ? ORDER BY version');
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
      insertVersion.run({ ...toParams(fields, at), id });
      return this.get(id) as Product;
    },
    /** Changes the product; a change of any setting is also a new version in force from `at`. */
    update(id: number, fields: ProductFields, at: number): Product {
      const before = this.get(id);
      update.run({ ...toParams(fields, at), id });
      if (!before || !sameSettings(before, fields)) insertVersion.run({ ...toParams(fields, at), id });
      return this.get(id) as Product;
    },
    /** The version in force at `at`. */
    versionAt(id: number, at: number): ProductVersion | null {
      const row = versionAt.get({ id, at }) as VersionRow | undefined;
      return row ? versionOf(row) : null;
    },
    /** The versions in force during [from, to): the one at `from` and every later one that began before `to`. */
    versionsDuring(id: number, from: number, to: number): ProductVersion[] {
      const first = this.versionAt(id, from);
      const later = (versionsAfter.all({ id, from, to }) as VersionRow[]).map(versionOf).filter((v) => v.version !== first?.version);
      return first ? [first, ...later] : later;
    },
    versions(id: number): ProductVersion[] {
      return (allVersions.all(id) as VersionRow[]).map(versionOf);
    },
  };
}

export type ProductRepository = ReturnType<typeof createProductRepository>;
