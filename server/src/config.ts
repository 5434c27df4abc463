import type { Severity } from './findings';

/** The contents of `episcope.config.json` (schema: schemas/config.schema.json). */
export interface EpiscopeConfig {
  /** Severity per rule id, or "off" to disable the rule. */
  rules?: Record<string, Severity | 'off'>;
  /** Thresholds keyed `rule-id.name`, e.g. `"reward-loop.probabilityGap": 0.2`. */
  thresholds?: Record<string, number>;
  /** Findings to suppress: a rule id (or "*") and a path glob relative to the config file, with a reason (suppress.ts). */
  ignore?: Array<{ rule: string; path: string; reason: string }>;
  /** Cap on states enumerated from a TypeScript model. */
  stateCap?: number;
  /** Monte Carlo rollouts per spec (0 = none for exact models). */
  rollouts?: number;
  seed?: number;
  /** Half-width target of the value bounds (relative for values above 1 in magnitude). */
  precision?: number;
}

export interface ResolvedConfig {
  rules: Record<string, Severity | 'off'>;
  thresholds: Record<string, number>;
  ignore: Array<{ rule: string; path: string; reason: string }>;
  stateCap: number;
  rollouts: number;
  seed: number;
  precision: number;
  /**
   * The folder of the config file, which `ignore` path globs are relative to (absolute, or in the
   * same form as the paths the front analyses). Undefined: globs are matched against the path as given.
   */
  baseDir?: string;
}

export const DEFAULT_CONFIG: ResolvedConfig = {
  rules: {},
  thresholds: {},
  ignore: [],
  stateCap: 200_000,
  rollouts: 0,
  seed: 1,
  precision: 1e-6,
};

export function resolveConfig(config: EpiscopeConfig | undefined): ResolvedConfig {
  return {
    rules: { ...(config?.rules ?? {}) },
    thresholds: { ...(config?.thresholds ?? {}) },
    ignore: [...(config?.ignore ?? [])],
    stateCap: config?.stateCap ?? DEFAULT_CONFIG.stateCap,
    rollouts: config?.rollouts ?? DEFAULT_CONFIG.rollouts,
    seed: config?.seed ?? DEFAULT_CONFIG.seed,
    precision: config?.precision ?? DEFAULT_CONFIG.precision,
  };
}

/** What a threshold lookup needs of a rule: its id and its documented thresholds. */
export interface ThresholdOwner {
  id: string;
  thresholds?: Record<string, { default: number }>;
}

/**
 * A rule's threshold: the configured `rule-id.name`, else the rule's documented default. The one
 * lookup for rules, the sandbox limits and the rollout step cap. Throws for a name the rule does
 * not document (a bug of ours, reported as an internal error).
 */
export function ruleThreshold(config: ResolvedConfig, rule: ThresholdOwner, name: string): number {
  const configured = config.thresholds[`${rule.id}.${name}`];
  if (configured !== undefined) return configured;
  const documented = rule.thresholds?.[name];
  if (!documented) throw new Error(`rule ${rule.id} has no threshold named ${name}`);
  return documented.default;
}
