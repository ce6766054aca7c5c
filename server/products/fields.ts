import type { z } from 'zod';
import { badField } from '../errors.js';
import type { productBody } from './contract.js';
import type { ProductFields } from './repository.js';

export type ProductInput = z.output<typeof productBody>;

/** A product's fields from a request (or an imported row), with what it leaves out kept from `base`. */
export function toFields(input: ProductInput, base?: ProductFields): ProductFields {
  const fields: ProductFields = {
    code: input.code,
    name: input.name,
    nominal: input.nominal,
    unit: input.unit,
    target: input.target,
    subgroupSize: input.subgroupSize,
    samplingMinutes: input.samplingMinutes,
    tare: input.tare ?? base?.tare ?? 0,
    windowSize: input.windowSize ?? base?.windowSize ?? 10,
    sigma: input.sigma === undefined ? (base?.sigma ?? null) : input.sigma,
    lsl: input.lsl === undefined ? (base?.lsl ?? null) : input.lsl,
    usl: input.usl === undefined ? (base?.usl ?? null) : input.usl,
    entryBasis: input.entryBasis ?? base?.entryBasis ?? 'net',
    costPerKg: input.costPerKg === undefined ? (base?.costPerKg ?? null) : input.costPerKg,
    rules: input.rules ?? base?.rules ?? {},
  };
  if (fields.lsl !== null && fields.usl !== null && fields.lsl >= fields.usl) throw badField('usl', 'must be above lsl');
  if (fields.target > 2 * fields.nominal) throw badField('target', 'more than twice the nominal: check the unit');
  return fields;
}
