/**
 * Runs the command line in-process with captured output, and checks the JSON output against the
 * CLI contract of the design brief (field by field, written from the brief's text).
 */
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { expect } from 'vitest';
import { runCli } from '../../server/src/cli/main';

export const REPO_ROOT = path.resolve(__dirname, '..', '..');

export interface CliResult {
  code: number;
  stdout: string;
  stderr: string;
}

export async function cli(
  argv: string[],
  options: { cwd?: string; isTTY?: boolean; env?: Record<string, string | undefined> } = {},
): Promise<CliResult> {
  let stdout = '';
  let stderr = '';
  const code = await runCli(argv, {
    stdout: { write: (text) => void (stdout += text), isTTY: options.isTTY ?? false },
    stderr: { write: (text) => void (stderr += text), isTTY: false },
    cwd: options.cwd ?? REPO_ROOT,
    env: options.env ?? {},
  });
  return { code, stdout, stderr };
}

export function tempFolder(prefix: string): string {
  return mkdtempSync(path.join(tmpdir(), `episcope-${prefix}-`));
}

const isBound = (v: unknown) => typeof v === 'number' || v === 'inf' || v === '-inf';

function expectInterval(v: unknown, where: string): void {
  expect(v, where).toBeTypeOf('object');
  const i = v as { lower: unknown; upper: unknown };
  expect(isBound(i.lower), `${where}.lower = ${String(i.lower)}`).toBe(true);
  expect(isBound(i.upper), `${where}.upper = ${String(i.upper)}`).toBe(true);
  const lower = i.lower === 'inf' ? Infinity : i.lower === '-inf' ? -Infinity : (i.lower as number);
  const upper = i.upper === 'inf' ? Infinity : i.upper === '-inf' ? -Infinity : (i.upper as number);
  expect(lower, `${where}: lower <= upper`).toBeLessThanOrEqual(upper);
}

function expectProbability(v: unknown, where: string): void {
  expect(v, where).toBeTypeOf('number');
  expect(v as number, where).toBeGreaterThanOrEqual(0);
  expect(v as number, where).toBeLessThanOrEqual(1);
}

function expectPosition(v: unknown, where: string): void {
  expect(Number.isInteger(v) && (v as number) >= 1, `${where} = ${String(v)} is a 1-based integer`).toBe(true);
}

/**
 * The contract of DESIGN.md, "CLI contract": version 1; files[] with path and findings (rule,
 * severity, message, line, column, endLine, endColumn 1-based, trace [{state, action}]); analysis
 * (states, transitions, exact, start {optimal, worst, random, reach {optimal, random} {goal,
 * failure, none}}), values per state with --values; infinite bounds as "inf" / "-inf".
 */
export function expectContract(output: unknown, withValues: boolean): void {
  const o = output as { version: unknown; files: unknown };
  expect(o.version).toBe(1);
  expect(Array.isArray(o.files)).toBe(true);
  for (const file of o.files as Array<Record<string, unknown>>) {
    const where = `file ${String(file.path)}`;
    expect(file.path, where).toBeTypeOf('string');
    expect(Array.isArray(file.findings), `${where}.findings`).toBe(true);
    for (const f of file.findings as Array<Record<string, unknown>>) {
      const fw = `${where} finding ${String(f.rule)}`;
      expect(f.rule, fw).toBeTypeOf('string');
      expect(['error', 'warning', 'info'], fw).toContain(f.severity);
      expect(f.message, fw).toBeTypeOf('string');
      expect((f.message as string).length, fw).toBeGreaterThan(0);
      for (const key of ['line', 'column', 'endLine', 'endColumn']) expectPosition(f[key], `${fw}.${key}`);
      const startsBeforeEnd =
        (f.line as number) < (f.endLine as number) ||
        ((f.line as number) === (f.endLine as number) && (f.column as number) <= (f.endColumn as number));
      expect(startsBeforeEnd, `${fw}: range start before end`).toBe(true);
      expect(Array.isArray(f.trace), `${fw}.trace`).toBe(true);
      for (const step of f.trace as Array<Record<string, unknown>>) {
        expect(step.state, `${fw}.trace.state`).toBeTypeOf('string');
        if ('action' in step) expect(step.action, `${fw}.trace.action`).toBeTypeOf('string');
      }
    }
    if (file.analysis === undefined) continue;
    const a = file.analysis as Record<string, any>;
    expect(Number.isInteger(a.states) && a.states >= 0, `${where}.states`).toBe(true);
    expect(Number.isInteger(a.transitions) && a.transitions >= 0, `${where}.transitions`).toBe(true);
    expect(a.exact, `${where}.exact`).toBeTypeOf('boolean');
    for (const policy of ['optimal', 'worst', 'random']) expectInterval(a.start[policy], `${where}.start.${policy}`);
    for (const policy of ['optimal', 'random']) {
      for (const kind of ['goal', 'failure', 'none'])
        expectProbability(a.start.reach[policy][kind], `${where}.reach.${policy}.${kind}`);
    }
    if (!withValues) {
      expect(a.values, `${where}.values without --values`).toBeUndefined();
      continue;
    }
    expect(a.values, `${where}.values`).toBeTypeOf('object');
    expect(Object.keys(a.values).length, `${where}: one entry per state`).toBe(a.states);
    for (const [state, v] of Object.entries(a.values as Record<string, any>)) {
      for (const policy of ['optimal', 'random', 'worst'])
        expectInterval(v[policy], `${where}.values.${state}.${policy}`);
      expect(Array.isArray(v.best), `${where}.values.${state}.best`).toBe(true);
      for (const action of v.best) expect(action).toBeTypeOf('string');
    }
  }
}

/** Reads a bound back ("inf" / "-inf" to infinities). */
export function bound(v: number | 'inf' | '-inf'): number {
  return v === 'inf' ? Infinity : v === '-inf' ? -Infinity : v;
}
