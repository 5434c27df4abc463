/**
 * Bounded work on hostile input: a spec with tens of thousands of wrong-typed entries, or megabytes
 * of blanks, loads with its findings capped and counted, never a hang or a crash. The time limits
 * here only stop a quadratic regression from hanging the suite (they hold at a load average of 8
 * on 2 cores); the real figures are printed by `npm run bench -- hostile`.
 */
import { describe, expect, it } from 'vitest';
import { analyzeJsonText } from '../../server/src/analyze';
import { blankPaddedSpecText, wrongTypedTransitionsText } from '../../scripts/bench/generators';

const SANITY_LIMIT_MS = 120_000;

describe('hostile input is bounded', () => {
  for (const count of [20_000, 200_000]) {
    it(
      `${count} wrong-typed transitions: the first problems described, the rest counted`,
      { timeout: SANITY_LIMIT_MS },
      () => {
        const report = analyzeJsonText('/specs/hostile.mdp.json', wrongTypedTransitionsText(count));
        const schema = report.findings.filter((f) => f.rule === 'schema');
        // 200 described, one note for the rest (every transition has exactly one problem: its `from`).
        expect(schema).toHaveLength(201);
        expect(schema[0].message).toMatch(/^transitions\[0\]\.from must be a string or a list, not 0/);
        expect(schema[200].message).toBe(`${count - 200} more schema problems are not shown; fix the ones above first`);
        expect(report.findings.length).toBeLessThan(260);
        expect(report.notAnalysed).toMatch(/could not be read/);
        expect(report.internalErrors).toEqual([]);
      },
    );
  }

  it('15 MB of blanks around a valid spec loads and is analysed', { timeout: SANITY_LIMIT_MS }, () => {
    const report = analyzeJsonText('/specs/padded.mdp.json', blankPaddedSpecText(15_000_000), { analysis: true });
    expect(report.findings.filter((f) => f.severity === 'error')).toEqual([]);
    // One step paying 1 into the goal: V*(a) = 1 exactly.
    expect(report.analysis?.start.optimal).toEqual({ lower: 1, upper: 1 });
  });
});
