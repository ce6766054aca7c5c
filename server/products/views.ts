import type { ProductView } from './contract.js';
import type { Product } from './repository.js';

/** A product as the API shows it, with its TNE, T1 and T2. */
export function productView(p: Product): ProductView {
  return {
    id: p.id,
    code: p.code,
    name: p.name,
    nominal: p.nominal,
    unit: p.unit,
    target: p.target,
    subgroupSize: p.subgroupSize,
    samplingMinutes: p.samplingMinutes,
    windowSize: p.windowSize,
    tare: p.tare,
    sigma: p.sigma,
    lsl: p.lsl,
    usl: p.usl,
    entryBasis: p.entryBasis,
    costPerKg: p.costPerKg,
    rules: p.rules,
    tne: p.tne,
    t1: p.t1,
    t2: p.t2,
    version: p.version,
  };
}
