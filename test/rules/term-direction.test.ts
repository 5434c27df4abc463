/**
 * term-direction: cases that must fire and cases that must not (scenarios of our own, invented numbers).
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf, spanText, type SpecObject } from '../helpers/specs';
import { analyzeTs } from '../typescript/ts-specs';

/** A courier robot: drive to the locker (battery drain), drop the parcel (delivery bonus). */
function courier(overrides: SpecObject = {}, drive: object = { battery: -0.2 }, drop: object = { delivery: 5 }): SpecObject {
  return {
    name: 'courier',
    discount: 0.95,
    start: 'depot',
    actions: ['drive', 'drop'],
    rewardTerms: { battery: { direction: 'penalty' }, delivery: { direction: 'bonus' }, misc: { direction: 'either' } },
    states: { depot: { actions: ['drive'] }, locker: { actions: ['drop'] }, done: { terminal: 'goal' } },
    transitions: [
      { from: 'depot', action: 'drive', to: 'locker', reward: drive },
      { from: 'locker', action: 'drop', to: 'done', reward: drop },
    ],
    ...overrides,
  };
}

describe('term-direction: must fire', () => {
  const cases: Array<[string, SpecObject, string, string]> = [
    ['a penalty written as a positive reward (maximize)', courier({}, { battery: 0.2 }), '0.2', 'battery'],
    ['a bonus written as a negative reward (maximize)', courier({}, { battery: -0.2 }, { delivery: -5 }), '-5', 'delivery'],
    ['under minimize, a penalty written as a negative cost', courier({ objective: 'minimize' }, { battery: -0.2 }, { delivery: -5 }), '-0.2', 'battery'],
    ['under minimize, a bonus written as a positive cost', courier({ objective: 'minimize' }, { battery: 0.2 }, { delivery: 5 }), '5', 'delivery'],
  ];
  it.each(cases)('%s', (_name, spec, valueText, term) => {
    const report = checkSpec(spec);
    const found = findingsOf(report, 'term-direction');
    expect(found).toHaveLength(1);
    expect(found[0].severity).toBe('warning');
    // The finding points at the offending number and says which term and what it pays.
    expect(spanText(report, found[0])).toBe(valueText);
    expect(found[0].message).toContain(`'${term}'`);
    expect(found[0].related?.[0].message).toContain(`'${term}' is declared`);
  });

  it('reports a transition written once for several states once', () => {
    const spec = courier({
      states: { depot: { actions: ['drive'] }, yard: { actions: ['drive'] }, locker: { actions: ['drop'] }, done: { terminal: 'goal' } },
      start: ['depot', 'yard'],
      transitions: [
        { from: ['depot', 'yard'], action: 'drive', to: 'locker', reward: { battery: 0.3 } },
        { from: 'locker', action: 'drop', to: 'done', reward: { delivery: 5 } },
      ],
    });
    const found = findingsOf(checkSpec(spec), 'term-direction');
    expect(found).toHaveLength(1);
    expect(found[0].message).toContain('+0.3');
  });
});

describe('term-direction: must not fire', () => {
  const cases: Array<[string, SpecObject]> = [
    ['signs as declared', courier()],
    ['zero is allowed for both directions', courier({}, { battery: 0 }, { delivery: 0 })],
    ["'either' takes any sign", courier({}, { battery: -0.2, misc: 3 }, { delivery: 5, misc: -3 })],
    ['under minimize, a penalty is a positive cost and a bonus a negative one', courier({ objective: 'minimize' }, { battery: 0.2 }, { delivery: -5 })],
    ['plain numeric rewards have no direction', courier({}, -3 as unknown as object, 7 as unknown as object)],
  ];
  it.each(cases)('%s', (_name, spec) => {
    const report = checkSpec(spec);
    expect(report.notAnalysed).toBeUndefined();
    expect(findingsOf(report, 'term-direction')).toEqual([]);
  });
});

describe('term-direction on an enumerable TypeScript model', () => {
  it('fires once at outcomes when the restocking example pays its holding penalty as a gain', async () => {
    const text = readFileSync(join(__dirname, '../../examples/shelf-restocking.mdp.ts'), 'utf8');
    const flipped = text.replace('holding: -HOLDING_COST * left', 'holding: HOLDING_COST * left');
    expect(flipped).not.toBe(text);
    const clean = await analyzeTs(text);
    expect(findingsOf(clean, 'term-direction')).toEqual([]);
    const report = await analyzeTs(flipped);
    const found = findingsOf(report, 'term-direction');
    expect(found).toHaveLength(1);
    expect(spanText(report, found[0])).toBe('outcomes');
    // HOLDING_COST * left with at least one unit left: 0.1 per unit, a gain of +0.1 or more.
    expect(found[0].message).toMatch(/reward term 'holding' is declared a penalty \(reward <= 0\) but is \+0\.[1-8]\d* here/);
    expect(found[0].message).toMatch(/and in \d+ more outcomes from the same code/);
    expect(spanText(report, found[0].related![0].span)).toContain('holding');
  });
});
