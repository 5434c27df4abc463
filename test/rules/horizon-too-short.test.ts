/**
 * horizon-too-short: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { describe, expect, it } from 'vitest';
import { applyFix, checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';

/** A harvest drone crossing `rows` rows to the collection point within `horizon` steps. */
function field(rows: number, horizon?: number, overrides: SpecObject = {}): SpecObject {
  const states: Record<string, object> = { collect: { terminal: 'goal' } };
  const transitions: object[] = [];
  for (let i = 0; i < rows; i++) {
    states[`row${i}`] = {};
    const next = i + 1 === rows ? 'collect' : `row${i + 1}`;
    transitions.push({ from: `row${i}`, action: 'fly', to: next, reward: next === 'collect' ? 10 : -1 });
    transitions.push({ from: `row${i}`, action: 'hover', to: `row${i}`, reward: -1 });
  }
  return { name: 'field', discount: 1, ...(horizon !== undefined ? { horizon } : {}), start: 'row0', actions: ['fly', 'hover'], states, transitions, ...overrides };
}

describe('horizon-too-short: must fire', () => {
  it('a goal 10 steps away with a horizon of 6', () => {
    const report = checkSpec(field(10, 6));
    const found = findingsOf(report, 'horizon-too-short');
    expect(found).toHaveLength(1);
    expect(spanText(report, found[0])).toBe('6');
    expect(found[0].message).toContain('horizon 6');
    expect(found[0].message).toContain('10 steps away');
    expect(found[0].message).toContain('every episode');
    expect(found[0].trace?.map((t) => t.state)).toEqual([...Array.from({ length: 10 }, (_, i) => `row${i}`), 'collect']);
  });

  it('names the share of the start distribution that cannot make it', () => {
    const found = findingsOf(checkSpec(field(10, 6, { start: { row0: 0.25, row8: 0.75 } })), 'horizon-too-short');
    expect(found[0].message).toContain('25% of episodes');
  });

  it('its quick fix raises the horizon to the distance, after which the rule is quiet', () => {
    const report = checkSpec(field(10, 6));
    const [finding] = findingsOf(report, 'horizon-too-short');
    const fixed = applyFix(report, finding.fixes![0].edits);
    expect(fixed).toContain('"horizon": 10');
    expect(findingsOf(checkSpec(fixed), 'horizon-too-short')).toEqual([]);
  });
});

describe('horizon-too-short: must not fire', () => {
  const cases: Array<[string, SpecObject]> = [
    ['a horizon exactly as long as the route', field(10, 10)],
    ['no horizon', field(10)],
    ['no goal at all', field(3, 1, { states: { row0: {}, row1: {}, row2: {}, collect: { terminal: 'neutral' } } })],
  ];
  it.each(cases)('%s', (_name, spec) => {
    const report = checkSpec(spec);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'horizon-too-short')).toEqual([]);
  });
});
