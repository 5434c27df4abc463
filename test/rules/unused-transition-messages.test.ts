/**
 * Structural findings about a transition the compiler never uses (it leaves a terminal state, or an
 * earlier transition already defines the same state and action) must not claim that the spec is not
 * compiled: the compiler skips such transitions, so the spec compiles and every value is computed.
 * Found by acceptance testing with specs written outside the repository.
 */
import { describe, expect, it } from 'vitest';
import { chainWith, checkSpec, findingsOf, specText } from '../helpers/specs';

const NEVER_TAKEN =
  'the transition is never used (it leaves a terminal state, so it is never taken), so no value depends on it';
const OVERRIDDEN =
  'the transition is never used (an earlier transition defines the same state and action and wins), so no value depends on it';

describe('findings on transitions the compiler never uses', () => {
  it('probability-sum out of a terminal: the spec compiles and the message says the transition is never taken', () => {
    const report = checkSpec(chainWith([{ from: 'goal', action: 'go', to: { a: 0.5, b: 0.4 } }]));
    const [finding] = findingsOf(report, 'probability-sum');
    expect(finding.message).toContain(
      'add up to 0.9, not 1: 0.1 of the episodes that take it have no defined next state; ' + NEVER_TAKEN,
    );
    expect(finding.message).not.toContain('not compiled');
    expect(report.model).toBeDefined();
    // The chain's own values are unaffected: -1 + 0.9 * 10 from the start.
    expect(report.analysis!.start.optimal.lower).toBeCloseTo(8, 9);
    expect(findingsOf(report, 'terminal-has-transitions')).toHaveLength(1);
  });

  it('negative-probability and non-finite-reward in a later definition of a pair say it is overridden', () => {
    // JSON.stringify writes Infinity as null, so the literal 1e400 goes into the text by hand.
    const text = specText(
      chainWith([
        {
          from: 'a',
          action: 'go',
          to: [
            { state: 'b', probability: 1.5, reward: 'HUGE' },
            { state: 'a', probability: -0.5, reward: 0 },
          ],
        },
      ]),
    );
    const report = checkSpec(text.replace('"HUGE"', '1e400'));
    const negatives = findingsOf(report, 'negative-probability');
    expect(negatives).toHaveLength(2);
    for (const finding of negatives) expect(finding.message).toContain('no distribution matches it; ' + OVERRIDDEN);
    const [infinite] = findingsOf(report, 'non-finite-reward');
    expect(infinite.message).toContain('is infinity (the number is too large for a 64-bit float): ' + OVERRIDDEN);
    expect(report.model).toBeDefined();
    expect(findingsOf(report, 'duplicate-transition')).toHaveLength(1);
  });

  it('undeclared-state in a transition out of a terminal keeps its suggestion and drops the compile claim', () => {
    const report = checkSpec(chainWith([{ from: 'goal', action: 'go', to: 'bb' }]));
    const [finding] = findingsOf(report, 'undeclared-state');
    expect(finding.message).toContain(
      "leads to 'bb', which is not declared in \"states\" (did you mean 'b'?): " + NEVER_TAKEN,
    );
    expect(report.model).toBeDefined();
  });

  it('a list "from" with one used pair keeps the original message, and the compiler refuses the spec', () => {
    const report = checkSpec(
      chainWith([], {
        states: { a: {}, b: {}, c: {}, goal: { terminal: 'goal' } },
        transitions: [
          { from: 'a', action: 'go', to: 'b', reward: -1 },
          { from: 'b', action: 'go', to: 'goal', reward: 10 },
          // 'goal' is terminal (skipped), but 'c' is used: the bad sum stops compilation.
          { from: ['goal', 'c'], action: 'go', to: { a: 0.5, b: 0.4 } },
        ],
      }),
    );
    const [finding] = findingsOf(report, 'probability-sum');
    expect(finding.message).toMatch(/have no defined next state, so the spec is not compiled$/);
    expect(report.model).toBeUndefined();
  });

  it('the first definition of a pair is the used one: a bad sum there still stops compilation', () => {
    const report = checkSpec(
      chainWith([], {
        transitions: [
          { from: 'a', action: 'go', to: { b: 0.5, goal: 0.4 }, reward: -1 },
          { from: 'a', action: 'go', to: 'b', reward: -1 },
          { from: 'b', action: 'go', to: 'goal', reward: 10 },
        ],
      }),
    );
    const [finding] = findingsOf(report, 'probability-sum');
    expect(finding.message).toMatch(/so the spec is not compiled$/);
    expect(report.model).toBeUndefined();
  });
});
