import type { HeftContext } from '../context.js';
import { conflict, notFound } from '../errors.js';
import type { Product, ProductFields } from './repository.js';

/** Creating and changing products: each change and its audit row in one transaction; lines running it pick the change up. */
export function createProductService(ctx: Pick<HeftContext, 'db' | 'clock' | 'repos' | 'monitor'>) {
  const { db, clock, repos, monitor } = ctx;
  const refuseTakenCode = (code: string, except?: number) => {
    const clash = repos.products.getByCode(code);
    if (clash && clash.id !== except) throw conflict(`a product with code ${code} exists already`);
  };

  return {
    create(fields: ProductFields, actor: string): Product {
      refuseTakenCode(fields.code);
      const now = clock.now();
      return db.transaction(() => {
        const created = repos.products.create(fields, now);
        repos.audit.record({ at: now, actor, action: 'product.create', entity: 'product', entityId: created.id, after: fields });
        return created;
      }).immediate();
    },

    /** `fields` come from `merge(before)`, so a change is made against the product as it stands. */
    update(productId: number, merge: (before: Product) => ProductFields, describe: (p: Product) => unknown, actor: string): Product {
      const before = repos.products.get(productId);
      if (!before) throw notFound(`product ${productId}`);
      const fields = merge(before);
      refuseTakenCode(fields.code, before.id);
      const now = clock.now();
      const product = db.transaction(() => {
        const updated = repos.products.update(before.id, fields, now);
        repos.audit.record({ at: now, actor, action: 'product.update', entity: 'product', entityId: before.id, before: describe(before), after: fields });
        return updated;
      }).immediate();
      monitor.reloadLinesRunning(product.id);
      return product;
    },
  };
}
