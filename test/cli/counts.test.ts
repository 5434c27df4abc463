/**
 * Counts of findings read the same in every output format: text summary, Markdown, HTML and the
 * editor's workspace message all use one wording ("2 errors", "1 warning", "0 info").
 */
import { describe, expect, it } from 'vitest';
import type { JsonFile } from '../../server/src/cli/json-output';
import { markdownReport } from '../../server/src/cli/markdown';
import { htmlReport } from '../../server/src/cli/report-html';
import { PLAIN_STYLE, formatSummary } from '../../server/src/cli/text-output';
import { severityCount, type Severity } from '../../server/src/rules/types';

function fileWith(path: string, severities: Severity[]): JsonFile {
  return {
    path,
    findings: severities.map((severity, i) => ({
      rule: 'unreachable-state',
      severity,
      message: `finding ${i}`,
      line: i + 1,
      column: 1,
      endLine: i + 1,
      endColumn: 2,
      trace: [],
    })),
    notAnalysed: 'not needed here',
  };
}

describe('finding counts', () => {
  it('pluralise errors and warnings, never info', () => {
    expect([0, 1, 2].map((n) => severityCount(n, 'error'))).toEqual(['0 errors', '1 error', '2 errors']);
    expect([0, 1, 2].map((n) => severityCount(n, 'warning'))).toEqual(['0 warnings', '1 warning', '2 warnings']);
    expect([0, 1, 2].map((n) => severityCount(n, 'info'))).toEqual(['0 info', '1 info', '2 info']);
  });

  it('read the same in the text summary, the Markdown comment and the HTML report', () => {
    const files = [fileWith('a.mdp.json', ['warning', 'info', 'info']), fileWith('b.mdp.json', [])];
    const text = formatSummary(files, PLAIN_STYLE);
    const markdown = markdownReport({ version: 1, files, summary: { files: 2, error: 0, warning: 1, info: 2 } });
    const html = htmlReport({ files }, { toolName: 'episcope', toolVersion: '0', generatedAt: new Date(0) });
    expect(text).toBe('2 files checked: 0 errors, 1 warning, 2 info\n');
    expect(markdown).toContain('## Episcope: 0 errors, 1 warning, 2 info in 2 files');
    expect(html).toContain('>1 warning</span>');
    expect(html).toContain('>2 info</span>');
    for (const out of [text, markdown, html]) expect(out).not.toMatch(/\binfos\b/);
  });
});
