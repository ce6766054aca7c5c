import { MEAN_RULE_IDS, RULE_CATALOGUE, type MeanRuleId, type RuleId, type Severity } from './rules.js';
import type { CusumParameters, EwmaParameters } from './small-shift.js';

/** A product's rule choice: which rules run, at what severity, and the detectors' design. */
export interface RuleSet {
  enabled: Record<RuleId, boolean>;
  severity: Record<RuleId, Severity>;
  runLength: 8 | 9;
  ewma: EwmaParameters;
  cusum: CusumParameters;
}

/** What a product stores: only the choices that differ from the defaults. */
export interface RuleSetOverrides {
  rules?: Partial<Record<RuleId, { enabled?: boolean; severity?: Severity }>>;
  runLength?: 8 | 9;
  ewma?: Partial<EwmaParameters>;
  cusum?: Partial<CusumParameters>;
}

/** EWMA λ = 0.2, L = 2.962 (in-control ARL ≈ 500, Lucas & Saccucci 1990) and CUSUM k = 0.5, h = 5 (ARL ≈ 465, Hawkins 1993). */
export const DEFAULT_EWMA: EwmaParameters = { lambda: 0.2, L: 2.962 };
export const DEFAULT_CUSUM: CusumParameters = { k: 0.5, h: 5 };

/** Merges a product's overrides onto the catalogue's defaults. */
export function resolveRuleSet(overrides: RuleSetOverrides = {}): RuleSet {
  const enabled = {} as Record<RuleId, boolean>;
  const severity = {} as Record<RuleId, Severity>;
  for (const rule of RULE_CATALOGUE) {
    const o = overrides.rules?.[rule.id];
    enabled[rule.id] = o?.enabled ?? rule.defaultEnabled;
    severity[rule.id] = o?.severity ?? rule.defaultSeverity;
  }
  return {
    enabled,
    severity,
    runLength: overrides.runLength ?? 9,
    ewma: { ...DEFAULT_EWMA, ...overrides.ewma },
    cusum: { ...DEFAULT_CUSUM, ...overrides.cusum },
  };
}

/** The mean-chart rules a rule set has switched on. */
export function enabledMeanRules(set: RuleSet): MeanRuleId[] {
  return MEAN_RULE_IDS.filter((id) => set.enabled[id]);
}

/** A stable text key for caching work that depends only on the rule set and n. */
export function ruleSetKey(set: RuleSet, n: number): string {
  return JSON.stringify([set.enabled, set.runLength, set.ewma, set.cusum, n]);
}
