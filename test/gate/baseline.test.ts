import { describe, expect, it } from 'vitest';
import {
  BaselineError,
  compareWithBaseline,
  findingKey,
  messageSkeleton,
  newFindingsAtOrAbove,
  parseBaseline,
} from '../../server/src/cli/baseline';
import { analysis, finding, output } from './json-fixtures';

describe('finding identity', () => {
  it('masks numbers but keeps digits inside names', () => {
    expect(
      messageSkeleton(
        'the loop cell-3-4 -> s12 -> cell-3-4 earns 48.1 from the start; reaching exit earns -7.2e-1 (line 12:5).',
      ),
    ).toBe('the loop cell-3-4 -> s12 -> cell-3-4 earns # from the start; reaching exit earns # (line #:#).');
    expect(messageSkeleton('probabilities of  (roof, east)\n add up to 0.9, not 1')).toBe(
      'probabilities of (roof, east) add up to #, not #',
    );
    expect(messageSkeleton('a 3-step loop')).toBe('a 3-step loop');
  });

  it('does not depend on lines or figures, only on rule, path and wording', () => {
    const a = findingKey('reward-loop', 'a.mdp.json', 'loop hall -> pad earns 48.1; the exit earns 7.2');
    expect(findingKey('reward-loop', 'a.mdp.json', 'loop hall -> pad earns 50; the exit earns 7.25')).toBe(a);
    expect(findingKey('reward-loop', 'b.mdp.json', 'loop hall -> pad earns 48.1; the exit earns 7.2')).not.toBe(a);
    expect(findingKey('living-reward', 'a.mdp.json', 'loop hall -> pad earns 48.1; the exit earns 7.2')).not.toBe(a);
    expect(findingKey('reward-loop', 'a.mdp.json', 'loop hall -> dock earns 48.1; the exit earns 7.2')).not.toBe(a);
  });
});

describe('comparison with a baseline', () => {
  const base = output([
    {
      path: 'specs/a.mdp.json',
      findings: [
        finding('unreachable-state', 10, 'state "attic" is unreachable', 'info'),
        finding('reward-loop', 20, 'loop hall -> pad earns 48.1; the exit earns 7.2'),
      ],
      analysis: analysis([8.41, 8.43], 0.97),
    },
    {
      path: 'specs/gone.mdp.json',
      findings: [finding('dead-end', 3, 'state "x" offers no action', 'error')],
      analysis: analysis([1, 1], 1),
    },
  ]);

  it('finds nothing new when findings only moved and their figures shifted', () => {
    const moved = output([
      {
        path: 'specs/a.mdp.json',
        findings: [
          finding('reward-loop', 4, 'loop hall -> pad earns 48.2; the exit earns 7.2'),
          finding('unreachable-state', 31, 'state "attic" is unreachable', 'info'),
        ],
        analysis: analysis([8.42, 8.44], 0.97),
      },
      base.files[1],
    ]);
    const c = compareWithBaseline(base, moved);
    expect(c.newFindings).toEqual([]);
    expect(c.fixedFindings).toEqual([]);
    expect(c.unchangedFindings).toBe(3);
    // Overlapping sound intervals may hide the same value: no shift is claimed.
    expect(c.specs.map((s) => [s.path, s.status])).toEqual([
      ['specs/a.mdp.json', 'unchanged'],
      ['specs/gone.mdp.json', 'unchanged'],
    ]);
  });

  it('reports exactly the added finding, the fixed ones, and the moved start values', () => {
    const edited = output([
      {
        path: 'specs/a.mdp.json',
        findings: [
          finding('unreachable-state', 10, 'state "attic" is unreachable', 'info'),
          finding('trap-state', 14, 'states cellar -> cellar form a trap', 'error'),
          finding('reward-loop', 20, 'loop hall -> pad earns 48.1; the exit earns 7.2'),
        ],
        analysis: analysis([5, 5.5], 0.5),
      },
      { path: 'specs/new.mdp.json', findings: [], analysis: analysis([2, 2], 1) },
    ]);
    const c = compareWithBaseline(base, edited);
    expect(c.newFindings.map((n) => [n.path, n.finding.rule, n.finding.line])).toEqual([
      ['specs/a.mdp.json', 'trap-state', 14],
    ]);
    expect(c.fixedFindings.map((n) => [n.path, n.finding.rule])).toEqual([['specs/gone.mdp.json', 'dead-end']]);
    expect(c.unchangedFindings).toBe(2);
    expect(c.specs.map((s) => [s.path, s.status])).toEqual([
      ['specs/gone.mdp.json', 'removed'],
      ['specs/new.mdp.json', 'added'],
      ['specs/a.mdp.json', 'changed'],
    ]);
    const a = c.specs[2];
    // The optimal return's midpoint moved 8.42 -> 5.25 (3.17 / 8.42 = 0.38 of its size); goal reach
    // moved 0.97 -> 0.5 (0.47), the larger of the two.
    expect(a.magnitude).toBeCloseTo(0.47, 10);
    expect(a.goalOptimal).toEqual({ before: 0.97, after: 0.5 });
    expect(newFindingsAtOrAbove(c, 'error').map((n) => n.finding.rule)).toEqual(['trap-state']);
    expect(newFindingsAtOrAbove(c, 'never')).toEqual([]);
  });

  it('pairs same-key findings by exact message first', () => {
    const one = output([
      { path: 'p', findings: [finding('probability-sum', 5, 'outcomes add up to 0.9, not 1', 'error')] },
    ]);
    const two = output([
      {
        path: 'p',
        findings: [
          finding('probability-sum', 2, 'outcomes add up to 0.8, not 1', 'error'),
          finding('probability-sum', 9, 'outcomes add up to 0.9, not 1', 'error'),
        ],
      },
    ]);
    const c = compareWithBaseline(one, two);
    expect(c.newFindings.map((n) => n.finding.message)).toEqual(['outcomes add up to 0.8, not 1']);
    expect(compareWithBaseline(two, one).fixedFindings.map((n) => n.finding.line)).toEqual([2]);
  });
});

describe('reading a baseline', () => {
  it('accepts a JSON output', () => {
    const text = JSON.stringify(output([{ path: 'a', findings: [finding('schema', 1, 'x')] }]));
    expect(parseBaseline(text, 'base.json').files[0].findings[0].rule).toBe('schema');
  });

  it('rejects malformed files with a one-line reason', () => {
    const cases: Array<[string, RegExp]> = [
      [
        '{"version": 1, "files": [',
        /^baseline 'base.json' is not JSON \(.+\); give it the output of 'episcope check --format json'$/,
      ],
      ['{"version": 2, "files": []}', /^baseline 'base.json' is version 2 output; this episcope reads version 1$/],
      [
        '{"version": 1, "files": [{"path": "a", "findings": [{"rule": "x"}]}]}',
        /^baseline 'base.json' is not an 'episcope check --format json' output: files\[0\]\.findings\[0\] must have required property '\w+'$/,
      ],
      ['[]', /^baseline 'base.json' is not an 'episcope check --format json' output: the top level must be object$/],
    ];
    for (const [text, pattern] of cases) {
      let message = '';
      try {
        parseBaseline(text, 'base.json');
      } catch (error) {
        expect(error).toBeInstanceOf(BaselineError);
        message = (error as Error).message;
      }
      expect(message).toMatch(pattern);
      expect(message).not.toContain('\n');
    }
  });
});
