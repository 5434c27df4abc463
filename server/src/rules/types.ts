import type { FindingInput, Severity } from '../findings';
import type { Analysis } from '../analysis/types';
import type { ResolvedConfig } from '../config';
import type { CompiledModel } from '../model/compiled';
import type { ParsedSpec } from '../spec/types';


// Finding and its kin live in findings.ts; re-exported here for the rules.
export { SEVERITY_ORDER, severityCount } from '../findings';
export type { Finding, FindingInput, Fix, RelatedLocation, Severity, TextEdit, TraceStep } from '../findings';

export interface RuleContext {
  readonly text: string;
  readonly spec: ParsedSpec;
  /** Present when the spec compiled into a well-formed MDP. */
  readonly model?: CompiledModel;
  /** Present when the model exists and the analysis ran (computed once, shared by every rule). */
  readonly analysis?: Analysis;
  readonly config: ResolvedConfig;
  /** A threshold of this rule, from the config or the rule's documented default. */
  threshold(name: string): number;
  report(finding: FindingInput): void;
}

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
  /** What the check needs: the parsed spec only, the compiled model, or the analysis. */
  needs: 'spec' | 'model' | 'analysis';
  thresholds?: Record<string, ThresholdSpec>;
  check(ctx: RuleContext): void;
}
