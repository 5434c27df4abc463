import { describe, expect, it } from 'vitest';
import { compareWithBaseline } from '../../server/src/cli/baseline';
import { analysis as analysisOf, finding, output as out } from './json-fixtures';
import { markdownReport } from '../../server/src/cli/markdown';

/**
 * Cells of a GitHub-flavoured Markdown table row: split on pipes that are not escaped (the GFM
 * specification, "Tables (extension)": a `\|` inside a cell is part of the cell's text).
 */
function cells(row: string): string[] {
  return row
    .slice(1, -1)
    .split(/(?<!\\)\|/)
    .map((c) => c.trim());
}

function tables(markdown: string): string[][][] {
  const result: string[][][] = [];
  let current: string[][] | undefined;
  for (const line of markdown.split('\n')) {
    if (line.startsWith('|')) {
      if (!current) result.push((current = []));
      current.push(cells(line));
    } else current = undefined;
  }
  return result;
}

describe('markdown pull-request comment', () => {
  const base = out([
    {
      path: 'a.mdp.json',
      findings: [
        finding('reward-scale', 2, 'rewards span 1e5', 'info'),
        finding('dead-end', 8, 'state "pit" offers no action', 'error'),
      ],
      analysis: analysisOf([10, 10], 0.9, [0.5, 0.5]),
    },
    { path: 'b.mdp.json', findings: [], analysis: analysisOf([3, 3], 1, [0.5, 0.5]) },
  ]);
  const head = out([
    {
      path: 'a.mdp.json',
      findings: [
        finding('reward-scale', 2, 'rewards span 1e5', 'info'),
        finding('objective-sign', 4, 'entering "crash" pays 5 | more than "dock" pays 1', 'warning'),
        finding('trap-state', 6, 'states <pit> form a trap', 'error'),
      ],
      analysis: analysisOf([4, 4], 0.6, [0.5, 0.5]),
    },
    { path: 'b.mdp.json', findings: [], analysis: analysisOf([3, 3], 1, [0.5, 0.5]) },
  ]);

  it('lists new findings (most severe first), fixed ones and moved returns, in well-formed tables', () => {
    const md = markdownReport(head, compareWithBaseline(base, head), { failOn: 'error' });
    expect(md.split('\n')[0]).toBe('## Episcope: 2 new findings, 1 fixed, 1 spec with changed returns');
    const [added, fixed, moved] = tables(md);
    expect(added.map((row) => row.length)).toEqual([4, 4, 4, 4]);
    expect(added.slice(2).map((row) => [row[0], row[1], row[2]])).toEqual([
      ['🔴 error', '`trap-state`', '`a.mdp.json:6:5`'],
      ['🟠 warning', '`objective-sign`', '`a.mdp.json:4:5`'],
    ]);
    expect(added[2][3]).toBe('states &lt;pit&gt; form a trap');
    expect(added[3][3]).toBe('entering "crash" pays 5 \\| more than "dock" pays 1');
    expect(md).toContain('### New findings (1 at or above `--fail-on error`)');
    expect(fixed.slice(2).map((row) => row[1])).toEqual(['`dead-end`']);
    expect(moved.slice(2)).toEqual([
      ['`a.mdp.json`', '10 → **4** (-6)', '0.5', '0.9 → **0.6** (-0.3)', '0.9 → **0.6** (-0.3)'],
    ]);
    expect(md).toContain('1 finding unchanged from the baseline.');
    expect(md.trim().split('\n').pop()).toMatch(
      /^_Passing checks means the spec is well-posed, not that a trained policy is safe/,
    );
  });

  it('says so when nothing changed', () => {
    const md = markdownReport(base, compareWithBaseline(base, base));
    expect(md).toContain('## Episcope: 0 new findings, 0 fixed, 0 specs with changed returns');
    expect(md).toContain('No change against the baseline: 2 findings as before in 2 files.');
    expect(tables(md)).toEqual([]);
  });

  it('without a baseline summarises findings and returns', () => {
    const md = markdownReport(head);
    expect(md.split('\n')[0]).toBe('## Episcope: 1 error, 1 warning, 1 info in 2 files');
    const [findings, returns] = tables(md);
    expect(findings.slice(2).map((r) => r[1])).toEqual(['`trap-state`', '`objective-sign`', '`reward-scale`']);
    expect(returns[0]).toEqual([
      'Spec',
      'Optimal return',
      'Random return',
      'Worst return',
      'Goal reach (optimal)',
      'Best goal reach',
    ]);
    expect(returns.slice(2).map((r) => r.slice(0, 2))).toEqual([
      ['`a.mdp.json`', '4'],
      ['`b.mdp.json`', '3'],
    ]);
  });

  it('cuts long lists with a count', () => {
    const many = out([
      {
        path: 'a.mdp.json',
        findings: Array.from({ length: 30 }, (_, i) =>
          finding('unreachable-state', i + 1, `state "s${i}" is unreachable`, 'info'),
        ),
      },
    ]);
    const md = markdownReport(many, compareWithBaseline(out([{ path: 'a.mdp.json', findings: [] }]), many), {
      maxRows: 10,
    });
    const [added] = tables(md);
    expect(added).toHaveLength(2 + 10 + 1);
    expect(added[12][3]).toBe('_and 20 more_');
  });
});
