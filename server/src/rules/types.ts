import type { FindingInput, Severity } from '../findings';
import type { Analysis } from '../analysis/types';
import type { ResolvedConfig } from '../config';
import type { CompiledModel } from '../model/compiled';
import type { ParsedSpec } from '../load/types';

// Finding and its kin live in findings.ts; re-exported here for the rules.
export { SEVERITY_ORDER, severityCount } from '../findings';
export type { Finding, FindingInput, Fix, RelatedLocation, Severity, TextEdit, TraceStep } from '../findings';

export interface RuleContext {
  readonly text: string;
  readonly spec: ParsedSpec;
  /**
   * Present when the spec compiled into a well-formed MDP; for rules that need only the graph, also
   * the declared part of a spec that does not compile (then `incomplete` is set).
   */
  readonly model?: CompiledModel;
  /** Set when `model` is only the declared part of a spec that does not compile. */
  readonly incomplete?: IncompleteModel;
  /** Present when the model exists and the analysis ran (computed once, shared by every rule). */
  readonly analysis?: Analysis;
  readonly config: ResolvedConfig;
  /** A threshold of this rule, from the config or the rule's documented default. */
  threshold(name: string): number;
  report(finding: FindingInput): void;
}

/**
 * The declared part of a spec that does not compile: every state, and every choice and outcome that
 * is well formed. Outcomes into undeclared states, and choices with an unreadable or out-of-range
 * probability, are left out; `brokenStates` marks the states that lost one, because what they do is
 * not known (a graph rule must not conclude, say, that no action leaves them).
 */
export interface IncompleteModel {
  /** Why the spec does not compile, in one sentence (the compiler's reason). */
  reason: string;
  brokenStates: Uint8Array;
}

/** The kinds of spec a rule's check can fire on. */
export type RuleSource = 'json' | 'enumerable' | 'sampled';
export const RULE_SOURCES: readonly RuleSource[] = ['json', 'enumerable', 'sampled'];
export const RULE_SOURCE_NAMES: Record<RuleSource, string> = {
  json: 'JSON specs',
  enumerable: 'enumerable TypeScript models',
  sampled: 'sampled TypeScript models',
};

export interface ThresholdSpec {
  default: number;
  /** Why the default is what it is; shown by `episcope explain`. */
  description: string;
}

export interface Rule {
  id: string;
  defaultSeverity: Severity;
  /** One line: what the rule finds. */
  summary: string;
  /** Markdown: why it matters, when it fires, how to fix it, the thresholds' justification. */
  documentation: string;
  /**
   * What the check needs: the parsed spec only; the graph (the compiled model, or the declared part
   * of a spec that does not compile); the compiled model; or the analysis.
   */
  needs: 'spec' | 'graph' | 'model' | 'analysis';
  /** The kinds of spec the check can fire on (shown by `episcope explain` and the README table). */
  sources: readonly RuleSource[];
  thresholds?: Record<string, ThresholdSpec>;
  check(ctx: RuleContext): void;
}
