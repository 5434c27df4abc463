/**
 * What every layer reports: a finding with its span, severity, trace and fixes. Loaders, rules,
 * suppression and the fronts all speak this, so it depends on nothing but spans.
 */
import type { Span } from './load/span';

export type Severity = 'error' | 'warning' | 'info';
export const SEVERITY_ORDER: Record<Severity, number> = { error: 3, warning: 2, info: 1 };

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
  /** Set when the finding was made on the empirical model of a sampled model. */
  fromSamples?: SampleSupport;
}

/** What a finding made on the empirical model of a sampled model rests on (model/empirical.ts). */
export interface SampleSupport {
  /** Sampled steps in the model in all (rollout steps plus exploration samples). */
  samples: number;
  /** State-action pairs the finding's trace uses (every pair of the model when it has no trace). */
  pairs: number;
  /** Fewest samples of those pairs. */
  fewest: number;
  /** Whether every probability and varying reward it uses is known within the sampling tolerance. */
  survives: boolean;
}

export interface Finding extends FindingInput {
  rule: string;
  severity: Severity;
}

/** Where a suppression came from: an `ignore` entry of the config file, or an `episcope-ignore` comment. */
export type SuppressionSource = { kind: 'config'; ignoreIndex: number } | { kind: 'comment'; line: number };

/** A finding that a suppression hid, with the reason the user gave. */
export interface SuppressedFinding {
  finding: Finding;
  reason: string;
  source: SuppressionSource;
}

/**
 * "3 errors", "1 warning", "2 info": a count of findings of one severity, worded the same in every
 * output format ("info" is a mass noun and takes no plural).
 */
export function severityCount(n: number, severity: Severity): string {
  return `${n} ${severity}${n === 1 || severity === 'info' ? '' : 's'}`;
}
