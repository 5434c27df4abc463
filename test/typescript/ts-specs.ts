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

/** Short limits so that hostile cases finish quickly. */
export const FAST_LIMITS: EpiscopeConfig = { thresholds: { 'model-error.callTimeoutMs': 400, 'model-error.memoryMb': 64 } };
