import type { Db } from '../db/database.js';

export interface CheckMoments {
  id: number;
  takenAt: number;
  n: number;
  mean: number;
  sd: number | null;
  range: number;
  enteredBy: string | null;
}

/** Reads for the week review: the current revision of every check in a range, and their packs. */
export function createReviewRepository(db: Db) {
  const checks = db.prepare(
    `SELECT id, taken_at AS takenAt, n, mean, sd, range, entered_by AS enteredBy FROM checks
     WHERE line_id = @lineId AND product_id = @productId AND superseded_by IS NULL AND taken_at >= @from AND taken_at < @to
     ORDER BY taken_at, id`,
  );
  const packs = db.prepare(
    `SELECT p.net FROM packs p JOIN checks c ON c.id = p.check_id
     WHERE c.line_id = @lineId AND c.product_id = @productId AND c.superseded_by IS NULL AND c.taken_at >= @from AND c.taken_at < @to
       AND (@operators IS NULL OR c.entered_by IN (SELECT value FROM json_each(@operators)))
     ORDER BY c.taken_at, c.id, p.position`,
  );
  const products = db.prepare(
    `SELECT DISTINCT product_id AS productId FROM checks
     WHERE line_id = @lineId AND superseded_by IS NULL AND taken_at >= @from AND taken_at < @to`,
  );
  const operators = db.prepare(
    `SELECT entered_by AS name, COUNT(*) AS checks FROM checks
     WHERE line_id = @lineId AND superseded_by IS NULL AND taken_at >= @from AND taken_at < @to AND entered_by IS NOT NULL
     GROUP BY entered_by ORDER BY entered_by`,
  );
  return {
    checks(lineId: number, productId: number, from: number, to: number): CheckMoments[] {
      return checks.all({ lineId, productId, from, to }) as CheckMoments[];
    },
    packs(lineId: number, productId: number, from: number, to: number, onlyOperators: string[] | null = null): number[] {
      return (packs.all({ lineId, productId, from, to, operators: onlyOperators ? JSON.stringify(onlyOperators) : null }) as { net: number }[]).map((r) => r.net);
    },
    productsIn(lineId: number, from: number, to: number): number[] {
      return (products.all({ lineId, from, to }) as { productId: number }[]).map((r) => r.productId);
    },
    operatorsIn(lineId: number, from: number, to: number): { name: string; checks: number }[] {
      return operators.all({ lineId, from, to }) as { name: string; checks: number }[];
    },
  };
}

export type ReviewRepository = ReturnType<typeof createReviewRepository>;
