/**
 * The rule tester: one table of must-fire (`invalid`) and must-not-fire (`valid`) cases per rule,
 * JSON or TypeScript specs alike. Besides what each case asks, every finding of the rule is checked
 * for what all findings owe the user: a span inside the text, a message with no "NaN" or
 * "undefined", the rule's severity, and fixes whose edited text loads cleanly and no longer draws
 * that finding.
 */
import { describe, expect, it } from 'vitest';
import type { FileReport } from '../../server/src/analyze';
import type { EpiscopeConfig } from '../../server/src/config';
import { findRule } from '../../server/src/rules/registry';
import type { Finding, Severity } from '../../server/src/rules/types';
import type { Span } from '../../server/src/load/types';
import { analyzeTs } from '../typescript/ts-specs';
import { applyFix, checkSpec, findingsOf, spanText } from './specs';

/** A spec: a JSON object or text, or the text of a `*.mdp.ts` model. */
export type CaseSpec = object | string | { typescript: string };

export interface RuleCase {
  name: string;
  spec: CaseSpec;
  config?: EpiscopeConfig;
  /** The analysis must have run on the spec (no `notAnalysed`), so a quiet rule means something. */
  analysed?: boolean;
}

/** What one expected finding must show; every field is optional. */
export interface ExpectedFinding {
  /** The exact text the finding's span covers. */
  at?: string;
  /** A pattern, or the exact message. */
  message?: RegExp | string;
  /** Pieces of text the message must contain. */
  says?: string[];
  severity?: Severity;
  /** Fix titles in order: patterns, or exact titles. */
  fixes?: (RegExp | string)[];
  /** The exact texts the related locations' spans cover, in order, or just how many there are. */
  related?: string[] | number;
  /** The states of the finding's trace, in order, or just how many steps it has. */
  trace?: string[] | number;
  /** The (state, action) pairs of the finding's trace, in order; the last step often has no action. */
  steps?: Array<[string, string | undefined]>;
  /** The editor tags, exactly (e.g. `unnecessary`). */
  tags?: string[];
}

export interface ValidCase extends RuleCase {
  /** Further checks on the whole report (what other rules say, whether it compiled). */
  check?: (report: FileReport) => void;
}

export interface InvalidCase extends RuleCase {
  /** The rule's findings in document order (their number must match), or just how many. */
  findings: ExpectedFinding[] | number;
  /** Further checks on the whole report. */
  check?: (report: FileReport, findings: Finding[]) => void;
  /** Further checks on the report after each fix (applied alone to the case's spec). */
  afterFix?: (fixed: FileReport, fixTitle: string) => void;
}

export interface RuleTable {
  valid: ValidCase[];
  invalid: InvalidCase[];
}

/** Loose enough for a model run in the sandbox on a loaded 2-core machine (load average 8). */
const TYPESCRIPT_CASE_TIMEOUT_MS = 60_000;

function isTypeScript(spec: CaseSpec): spec is { typescript: string } {
  return (
    typeof spec === 'object' &&
    spec !== null &&
    'typescript' in spec &&
    typeof (spec as { typescript: unknown }).typescript === 'string'
  );
}

/** Runs the whole pipeline on a case's spec, as the CLI would. */
export async function runCase(spec: CaseSpec, config?: EpiscopeConfig): Promise<FileReport> {
  if (isTypeScript(spec)) return analyzeTs(spec.typescript, config ?? {});
  return checkSpec(spec, config);
}

/** Defines the table's tests for `ruleId` (call at the top level of a test file). */
export function testRule(ruleId: string, table: RuleTable): void {
  const rule = findRule(ruleId);
  describe(`${ruleId} (rule table)`, () => {
    it('is a registered rule', () => {
      expect(rule, `no rule ${ruleId} in the registry`).toBeDefined();
    });
    for (const c of table.valid) {
      it(
        `does not fire: ${c.name}`,
        { timeout: isTypeScript(c.spec) ? TYPESCRIPT_CASE_TIMEOUT_MS : undefined },
        async () => {
          const report = await runCase(c.spec, c.config);
          if (c.analysed) expect(report.notAnalysed).toBeUndefined();
          expect(findingsOf(report, ruleId).map((f) => f.message)).toEqual([]);
          c.check?.(report);
        },
      );
    }
    for (const c of table.invalid) {
      it(`fires: ${c.name}`, { timeout: isTypeScript(c.spec) ? TYPESCRIPT_CASE_TIMEOUT_MS : undefined }, async () => {
        const report = await runCase(c.spec, c.config);
        if (c.analysed) expect(report.notAnalysed).toBeUndefined();
        const findings = findingsOf(report, ruleId);
        const expected = typeof c.findings === 'number' ? c.findings : c.findings.length;
        expect(
          findings.map((f) => f.message),
          `${ruleId} findings`,
        ).toHaveLength(expected);
        for (const [i, finding] of findings.entries()) {
          checkFindingBasics(report, finding);
          if (typeof c.findings !== 'number') checkExpected(report, finding, c.findings[i]);
          await checkFixes(c, report, finding, ruleId);
        }
        c.check?.(report, findings);
      });
    }
  });
}

/**
 * A leaked JavaScript value: "NaN", or "undefined" not used as the English word ("the MDP is
 * undefined there", which several rules say on purpose).
 */
const LEAKED_VALUE = /\bNaN\b|(?<!\bis )\bundefined\b/;

/** A span inside the text: an editor can show it, and a fix can apply it. */
function expectInside(report: FileReport, span: Span, what: string): void {
  expect(span.start, what).toBeGreaterThanOrEqual(0);
  expect(span.end, what).toBeGreaterThanOrEqual(span.start);
  expect(span.end, what).toBeLessThanOrEqual(report.text.length);
}

function checkFindingBasics(report: FileReport, finding: Finding): void {
  expectInside(report, finding.span, 'the finding');
  expect(finding.message).not.toMatch(LEAKED_VALUE);
  expect(finding.message.trim()).not.toBe('');
  for (const step of finding.trace ?? []) {
    expect(JSON.stringify(step)).not.toMatch(/\bNaN\b/);
    if (step.span) expectInside(report, step.span, `the trace step at '${step.state}'`);
  }
  for (const related of finding.related ?? []) {
    expect(related.message).not.toMatch(LEAKED_VALUE);
    expectInside(report, related.span, `the related location "${related.message}"`);
  }
  for (const fix of finding.fixes ?? []) {
    expect(fix.title).not.toMatch(LEAKED_VALUE);
    // Edits apply back to front, so they must not overlap.
    const edits = [...fix.edits].sort((a, b) => a.span.start - b.span.start);
    edits.forEach((edit, i) => {
      expectInside(report, edit.span, `an edit of "${fix.title}"`);
      if (i > 0)
        expect(edit.span.start, `the edits of "${fix.title}" overlap`).toBeGreaterThanOrEqual(edits[i - 1].span.end);
    });
  }
  // A rule may raise or lower its own severity per finding (documented on the rule); it is always one of the three.
  expect(['error', 'warning', 'info']).toContain(finding.severity);
}

function checkExpected(report: FileReport, finding: Finding, expected: ExpectedFinding): void {
  if (expected.at !== undefined) expect(spanText(report, finding)).toBe(expected.at);
  if (typeof expected.message === 'string') expect(finding.message).toBe(expected.message);
  else if (expected.message) expect(finding.message).toMatch(expected.message);
  for (const piece of expected.says ?? []) expect(finding.message).toContain(piece);
  if (typeof expected.trace === 'number') expect(finding.trace ?? []).toHaveLength(expected.trace);
  else if (expected.trace) expect((finding.trace ?? []).map((step) => step.state)).toEqual(expected.trace);
  if (expected.steps) expect((finding.trace ?? []).map((step) => [step.state, step.action])).toEqual(expected.steps);
  if (typeof expected.related === 'number') expect(finding.related ?? []).toHaveLength(expected.related);
  else if (expected.related)
    expect((finding.related ?? []).map((r) => spanText(report, r.span))).toEqual(expected.related);
  if (expected.tags) expect(finding.tags ?? []).toEqual(expected.tags);
  if (expected.severity) expect(finding.severity).toBe(expected.severity);
  if (expected.fixes) {
    const titles = (finding.fixes ?? []).map((fix) => fix.title);
    expect(titles).toHaveLength(expected.fixes.length);
    expected.fixes.forEach((title, i) =>
      typeof title === 'string' ? expect(titles[i]).toBe(title) : expect(titles[i]).toMatch(title),
    );
  }
}

function loadErrors(report: FileReport): string[] {
  return report.findings.filter((f) => f.rule === 'syntax' || f.rule === 'schema').map((f) => f.message);
}

/**
 * Each fix, applied alone, must leave text that loads without a new syntax or schema error and on which
 * the rule draws fewer findings than before (the fixed one is gone).
 */
async function checkFixes(c: InvalidCase, report: FileReport, finding: Finding, ruleId: string): Promise<void> {
  const before = findingsOf(report, ruleId).length;
  const brokenBefore = loadErrors(report);
  for (const fix of finding.fixes ?? []) {
    const text = applyFix(report, fix.edits);
    const spec: CaseSpec = isTypeScript(c.spec) ? { typescript: text } : text;
    const after = await runCase(spec, c.config);
    // A spec that already had a syntax or schema error may keep it; the fix adds none.
    const broken = loadErrors(after).filter((message) => !brokenBefore.includes(message));
    expect(broken, `after "${fix.title}"`).toEqual([]);
    expect(findingsOf(after, ruleId).length, `after "${fix.title}" the finding is gone`).toBeLessThan(before);
    c.afterFix?.(after, fix.title);
  }
}
