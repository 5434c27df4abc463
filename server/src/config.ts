import { availableParallelism } from 'node:os';
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
  /** Learning from samples (sandbox/learn.ts): method and budget. */
  learning?: Partial<LearningConfig>;
  /** Half-width of the 95% interval wanted for rollout estimates; the output says how many more episodes it needs. */
  halfWidth?: number;
  /** Sandbox child processes a sampled model's rollouts and learning may use at once (1 to 256). */
  jobs?: number;
}

/** Learning from sampled episodes: the method ("off": none) and the budget, whichever runs out first. */
export interface LearningConfig {
  method: 'q-learning' | 'monte-carlo' | 'off';
  episodes: number;
  steps: number;
  /** Exploration rate of the epsilon-greedy / epsilon-soft behaviour. */
  epsilon: number;
  /** Monte Carlo: average returns after the first visit of a pair per episode (else every visit). */
  firstVisit: boolean;
}

export interface ResolvedConfig {
  rules: Record<string, Severity | 'off'>;
  thresholds: Record<string, number>;
  ignore: Array<{ rule: string; path: string; reason: string }>;
  stateCap: number;
  rollouts: number;
  seed: number;
  precision: number;
  learning: LearningConfig;
  halfWidth?: number;
  /** Sandbox child processes a sampled model may use at once; the figures are the same for any number. */
  jobs: number;
  /**
   * The folder of the config file, which `ignore` path globs are relative to (absolute, or in the
   * same form as the paths the front analyses). Undefined: globs are matched against the path as given.
   */
  baseDir?: string;
}

/** Most sandbox children one spec may use (the config schema's and --jobs' maximum). */
export const MAX_JOBS = 256;

export const DEFAULT_CONFIG: ResolvedConfig = {
  rules: {},
  thresholds: {},
  ignore: [],
  stateCap: 200_000,
  rollouts: 0,
  seed: 1,
  precision: 1e-6,
  // 200k steps keep learning of a simple model to about a second (npm run bench -- learning).
  learning: { method: 'q-learning', episodes: 20_000, steps: 200_000, epsilon: 0.1, firstVisit: true },
  jobs: defaultJobs(),
};

/** One child per core the machine offers, within 1..MAX_JOBS. */
export function defaultJobs(): number {
  const cores = typeof availableParallelism === 'function' ? availableParallelism() : 1;
  return Math.max(1, Math.min(MAX_JOBS, Math.floor(cores) || 1));
}

export function resolveConfig(config: EpiscopeConfig | undefined): ResolvedConfig {
  return {
    rules: { ...(config?.rules ?? {}) },
    thresholds: { ...(config?.thresholds ?? {}) },
    ignore: [...(config?.ignore ?? [])],
    stateCap: config?.stateCap ?? DEFAULT_CONFIG.stateCap,
    rollouts: config?.rollouts ?? DEFAULT_CONFIG.rollouts,
    seed: config?.seed ?? DEFAULT_CONFIG.seed,
    precision: config?.precision ?? DEFAULT_CONFIG.precision,
    learning: { ...DEFAULT_CONFIG.learning, ...(config?.learning ?? {}) },
    ...(config?.halfWidth !== undefined ? { halfWidth: config.halfWidth } : {}),
    jobs: config?.jobs ?? DEFAULT_CONFIG.jobs,
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
