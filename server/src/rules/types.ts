import type { Analysis } from '../analysis/types';
import type { ResolvedConfig } from '../config';
import type { CompiledModel } from '../model/compiled';
import type { ParsedSpec, Span } from '../spec/types';

export type Severity = 'error' | 'warning' | 'info';
export const SEVERITY_ORDER: Record<Severity, number> = { error: 3, warning: 2, info: 1 };

/**
 * "3 errors", "1 warning", "2 info": a count of findings of one severity, worded the same in every
 * output format ("info" is a mass noun and takes no plural).
 */
export function severityCount(n: number, severity: Severity): string {
  return `${n} ${severity}${n === 1 || severity === 'info' ? '' : 's'}`;
}

/** One step of a concrete state/action sequence shown with a finding. */
export interface TraceStep {
  state: string;
  action?: string;
  /** Where the step's transition (or the state) is written, when it is written anywhere. */
  span?: Span;
}

export interface RelatedLocation {
  span: Span;
  message: string;
}

export interface TextEdit {
  span: Span;
  newText: string;
}

/** A quick fix that is sound for the finding: applying the edits removes its cause. */
export interface Fix {
  title: string;
  edits: TextEdit[];
}

/** What a rule reports; the pipeline adds the rule id and the resolved severity. */
export interface FindingInput {
  message: string;
  span: Span;
  /** Overrides the rule's default severity (config still wins), e.g. trap-state at discount 1. */
  severity?: Severity;
  trace?: TraceStep[];
  related?: RelatedLocation[];
  fixes?: Fix[];
  /** Tags for editors: code that is never used, or a deprecated construct. */
  tags?: Array<'unnecessary' | 'deprecated'>;
}

export interface Finding extends FindingInput {
  rule: string;
  severity: Severity;
}

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
