import { describe, expect, it } from 'vitest';
import { chainSpec, checkSpec, findingsOf, spanText } from '../helpers/specs';

const RULE = 'reward-scale';

const rewards = (first: unknown, second: unknown, objective = 'maximize') =>
  chainSpec({ objective, transitions: [{ from: 'a', action: 'go', to: 'b', reward: first }, { from: 'b', action: 'go', to: 'goal', reward: second }] });

describe('reward-scale', () => {
  it('fires at a reward above 1e3 in magnitude, as info', () => {
    const report = checkSpec(rewards(-1, 5000));
    const [finding, ...rest] = findingsOf(report, RULE);
    expect(rest).toEqual([]);
    expect(finding.severity).toBe('info');
    expect(spanText(report, finding)).toBe('5000');
    expect(finding.message).toBe(
      `the reward 5000 of transitions[1] ('b' --go-->) exceeds 1000 in magnitude: learners tuned to one scale treat the smallest rewards as noise and large value targets destabilise training; dividing every reward by the same positive factor keeps the optimal policy`,
    );
    expect(finding.related).toBeUndefined();
  });

  it('fires when non-zero rewards span more than a factor 1e4, pointing at the largest with the smallest related', () => {
    const report = checkSpec(rewards({ time: -0.001 }, 500));
    const [finding] = findingsOf(report, RULE);
    expect(spanText(report, finding)).toBe('500');
    expect(finding.message).toMatch(/^rewards span a factor of 500000 in magnitude, from -0\.001 \(transitions\[0\] \('a' --go-->\) term 'time'\) to 500, more than 10000: /);
    expect(finding.related?.map((r) => spanText(report, r.span))).toEqual(['-0.001']);
  });

  it('reports both problems in one finding, and speaks of costs under minimize', () => {
    const report = checkSpec(rewards(0.01, 2000, 'minimize'));
    const findings = findingsOf(report, RULE);
    expect(findings).toHaveLength(1);
    expect(findings[0].message).toMatch(/^the cost 2000 of .* exceeds 1000 in magnitude; costs span a factor of 200000/);
  });

  it('honours configured thresholds', () => {
    const config = { thresholds: { 'reward-scale.maxMagnitude': 1e4, 'reward-scale.maxRatio': 1e6 } };
    expect(findingsOf(checkSpec(rewards(-1, 5000), config), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(rewards(-1, 5000), { thresholds: { 'reward-scale.maxMagnitude': 100 } }), RULE)).toHaveLength(1);
  });

  it('does not fire on rewards within range, ignores zero rewards, and ignores non-finite ones (non-finite-reward)', () => {
    expect(findingsOf(checkSpec(rewards(-1, 10)), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(rewards(0, 1000)), RULE)).toEqual([]);
    expect(findingsOf(checkSpec(rewards(-0.1, 999)), RULE)).toEqual([]);
    const text = JSON.stringify(rewards(-1, 10)).replace('"reward":10', '"reward":1e400');
    const report = checkSpec(text);
    expect(findingsOf(report, RULE)).toEqual([]);
    expect(findingsOf(report, 'non-finite-reward')).toHaveLength(1);
  });
});
