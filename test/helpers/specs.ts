/**
 * Helpers for rule and loader tests: analyse a spec given as an object or as text, pick a rule's
 * findings, read the text a finding points at, and build small valid specs to vary.
 */
import { analyzeJsonText, type FileReport } from '../../server/src/analyze';
import { resolveConfig, type EpiscopeConfig } from '../../server/src/config';
import type { Finding } from '../../server/src/rules/types';
import type { Span } from '../../server/src/load/types';

/** The JSON text of a spec object, formatted one property per line as people write them. */
export function specText(spec: object | string): string {
  return typeof spec === 'string' ? spec : JSON.stringify(spec, null, 2);
}

/** Runs the whole pipeline (load, compile, analyse, every rule) on a JSON spec. */
export function checkSpec(spec: object | string, config?: EpiscopeConfig): FileReport {
  return analyzeJsonText('test.mdp.json', specText(spec), { config: resolveConfig(config) });
}

/** The findings of one rule, in document order. */
export function findingsOf(report: FileReport, ruleId: string): Finding[] {
  return report.findings.filter((finding) => finding.rule === ruleId);
}

/** The exact text a span (or a finding's span) covers. */
export function spanText(report: { text: string }, target: Span | { span: Span }): string {
  const span = 'span' in target ? target.span : target;
  return report.text.slice(span.start, span.end);
}

/** The 1-based line of a finding, as the CLI prints it. */
export function lineOf(report: FileReport, finding: Finding): number {
  return report.lines.position(finding.span.start).line + 1;
}

/** Applies a fix's edits to the report's text (edits must not overlap). */
export function applyFix(report: { text: string }, edits: ReadonlyArray<{ span: Span; newText: string }>): string {
  let text = report.text;
  for (const edit of [...edits].sort((a, b) => b.span.start - a.span.start)) {
    text = text.slice(0, edit.span.start) + edit.newText + text.slice(edit.span.end);
  }
  return text;
}

export type SpecObject = Record<string, unknown>;

/**
 * A small, valid, episodic spec of our own (invented numbers): a -> b -> goal with one action
 * `go`, step reward -1 and 10 for reaching the goal. Top-level fields of `overrides` replace
 * the base ones.
 */
export function chainSpec(overrides: SpecObject = {}): SpecObject {
  return {
    name: 'chain',
    discount: 0.9,
    start: 'a',
    actions: ['go'],
    states: { a: {}, b: {}, goal: { terminal: 'goal' } },
    transitions: [
      { from: 'a', action: 'go', to: 'b', reward: -1 },
      { from: 'b', action: 'go', to: 'goal', reward: 10 },
    ],
    ...overrides,
  };
}

/** chainSpec with extra transitions appended after the base ones. */
export function chainWith(transitions: object[], overrides: SpecObject = {}): SpecObject {
  const base = chainSpec(overrides);
  return { ...base, transitions: [...(base.transitions as object[]), ...transitions] };
}
