/** Helpers for TypeScript-spec tests: write a spec (and its local imports) to a temp folder and analyse it. */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { analyzeFile, type AnalyzeOptions, type FileReport } from '../../server/src/analyze';
import { resolveConfig, type EpiscopeConfig } from '../../server/src/config';
import type { Finding } from '../../server/src/rules/types';

/** Writes `files` (name -> text) to a fresh temp folder and returns the folder. */
export function writeFolder(files: Record<string, string>): string {
  const folder = mkdtempSync(join(tmpdir(), 'episcope-ts-'));
  for (const [name, text] of Object.entries(files)) writeFileSync(join(folder, name), text);
  return folder;
}

/** Analyses `spec.mdp.ts` with the given text (plus helper files) through the public pipeline. */
export async function analyzeTs(
  text: string,
  config: EpiscopeConfig = {},
  options: Omit<AnalyzeOptions, 'config'> = {},
  helpers: Record<string, string> = {},
): Promise<FileReport> {
  const folder = writeFolder({ ...helpers, 'spec.mdp.ts': text });
  return analyzeFile(join(folder, 'spec.mdp.ts'), text, { analysis: true, ...options, config: resolveConfig(config) });
}

export function findingsOf(report: FileReport, rule: string): Finding[] {
  return report.findings.filter((f) => f.rule === rule);
}

/** 1-based line of a finding. */
export function lineOf(report: FileReport, finding: Finding): number {
  return report.lines.position(finding.span.start).line + 1;
}

/** The 1-based line of the first line of `text` containing `needle`. */
export function lineContaining(text: string, needle: string): number {
  return text.split('\n').findIndex((line) => line.includes(needle)) + 1;
}

/** An enumerable counter model whose `outcomes` body is replaced by `body`. */
export function counterSpec(body: string, extra = ''): string {
  return `import { defineMdp } from 'episcope';
${extra}
export default defineMdp({
  name: 'counter',
  discount: 0.9,
  start: { n: 0 },
  actions: () => ['up'],
  terminal: (s) => (s.n >= 3 ? 'goal' : undefined),
  outcomes(s, action) {
${body}
  },
});
`;
}

/**
 * The hang detector's limit in tests. It protects against a test waiting forever on an endless loop,
 * and it must not fire for a model that is fine: the watch starts before the worker thread has
 * loaded the model, so the limit must cover a worker start plus one call on a loaded machine. At a
 * load average of 8 on 2 cores a process gets about a quarter of a core, and 400 ms (the old value)
 * was not enough there; 3 s is about 750 ms of CPU time even then.
 */
export const TEST_CALL_TIMEOUT_MS = 3000;

/** Limits for hostile cases: a hang ends after TEST_CALL_TIMEOUT_MS, a memory bomb at 64 MB. */
export const FAST_LIMITS: EpiscopeConfig = {
  thresholds: { 'model-error.callTimeoutMs': TEST_CALL_TIMEOUT_MS, 'model-error.memoryMb': 64 },
};
