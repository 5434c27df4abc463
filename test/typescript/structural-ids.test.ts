/**
 * Structural problems in TypeScript model code get the rule ids JSON specs get (dead-end,
 * probability-sum), at the model function that produced them, instead of a generic model-error.
 */
import { describe, expect, test } from 'vitest';
import { analyzeTs, counterSpec, findingsOf, FAST_LIMITS } from './ts-specs';

describe('TypeScript structural problems under their own rule ids', () => {
  test('outcomes adding up to 0.5 is probability-sum at outcomes, and stops the analysis', async () => {
    const report = await analyzeTs(
      counterSpec(`    return [{ state: { n: s.n + 1 }, probability: s.n === 1 ? 0.5 : 1, reward: -1 }];`),
      FAST_LIMITS,
    );
    expect(findingsOf(report, 'model-error')).toEqual([]);
    const [finding] = findingsOf(report, 'probability-sum');
    expect(finding.severity).toBe('error');
    expect(report.text.slice(finding.span.start, finding.span.end)).toBe('outcomes');
    expect(finding.message).toContain(
      'outcomes({"n":1}, "up") returned outcome probabilities that add up to 0.5, not 1',
    );
    expect(report.analysis).toBeUndefined();
    expect(report.notAnalysed).toBe('the model code describes no well-defined MDP (see probability-sum)');
  });

  test('a non-terminal state without actions is dead-end at actions, in enumerable and sampled models', async () => {
    const enumerable = await analyzeTs(
      counterSpec(`    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`).replace(
        "actions: () => ['up'],",
        "actions: (s) => (s.n === 2 ? [] : ['up']),",
      ),
      FAST_LIMITS,
    );
    expect(findingsOf(enumerable, 'model-error')).toEqual([]);
    const [finding] = findingsOf(enumerable, 'dead-end');
    expect(finding.severity).toBe('error');
    expect(enumerable.text.slice(finding.span.start, finding.span.end)).toBe('actions');
    expect(finding.message).toContain(
      'actions({"n":2}) returned no action, and terminal() does not call that state terminal',
    );
    expect(enumerable.notAnalysed).toBe('the model code describes no well-defined MDP (see dead-end)');

    const sampled = await analyzeTs(
      `export default { discount: 0.9, start: 0, actions: (s) => (s === 2 ? [] : ['go']),
  sample: (s, a, rng) => ({ state: s + 1, reward: -1, terminal: s >= 4 ? 'goal' : undefined }) };`,
      { ...FAST_LIMITS, rollouts: 20 },
    );
    expect(findingsOf(sampled, 'model-error')).toEqual([]);
    const [inSample] = findingsOf(sampled, 'dead-end');
    expect(sampled.text.slice(inSample.span.start, inSample.span.end)).toBe('actions');
    expect(inSample.message).toMatch(/^actions\(2\) in rollout episode 0, step 2 returned no action/);
  });
});
