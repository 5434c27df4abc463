/**
 * empirical-model: the model built from a sampled model's transitions was not built (too many
 * keys, a key that could not be formed) or does not cover every state it saw (the exploration
 * budget ran out). Scenarios of our own: a lift that rides between floors.
 */
import { expect } from 'vitest';
import { testRule } from '../helpers/rule-tester';
import { FAST_LIMITS } from '../typescript/ts-specs';

/**
 * A sampled lift on floors 0 to 6 (the roof, a goal, is floor 6): `up` and `down` move it by `step`,
 * with `extra` members added to the definition.
 */
function lift(extra = '', step = '1'): { typescript: string } {
  return {
    typescript: `import { defineMdp } from 'episcope';
export default defineMdp({
  name: 'lift',
  discount: 0.9,
  start: 0,
  actions: () => ['up', 'down'],
  sample(floor: number, action: string, rng) {
    const next = Math.max(0, floor + (action === 'up' ? ${step} : -(${step})));
    return next >= 6 ? { state: 6, reward: 1, terminal: 'goal' as const } : { state: next, reward: 0 };
  },
${extra}
});
`,
  };
}

/** A lift that rides a random part of a floor each time: every state a new number. */
const drifting = (extra = '') => lift(extra, 'rng()');

testRule('empirical-model', {
  valid: [
    {
      name: 'a lift on whole floors: seven keys, every one tried with both actions',
      spec: lift(),
      check: (report) => {
        // Floors 0 to 5 with two actions each, and the roof.
        expect(report.empirical?.model.stateCount).toBe(7);
        expect(report.empirical?.model.samples?.complete).toBe(true);
      },
    },
    {
      name: 'a drifting lift whose stateKey rounds down to the floor',
      spec: drifting('  stateKey: (floor: number) => Math.floor(floor),'),
      config: { thresholds: { 'empirical-model.keyCap': 500 } },
      check: (report) => expect(report.empirical?.model.stateCount).toBe(7),
    },
  ],
  invalid: [
    {
      name: 'a drifting lift without a stateKey: more keys than the cap, and no empirical model',
      spec: drifting(),
      config: { thresholds: { 'empirical-model.keyCap': 500 } },
      findings: [
        { severity: 'info', says: ['was not built: more than 500 distinct state keys were sampled (the cap)'] },
      ],
      // Nothing is reported as if it had been learned from samples.
      check: (report) => expect(report.findings.filter((f) => f.fromSamples)).toEqual([]),
    },
    {
      name: 'a stateKey that throws: the key could not be formed',
      spec: lift(`  stateKey(floor: number) {\n    throw new Error('no key for floor ' + floor);\n  },`),
      config: FAST_LIMITS,
      findings: [{ says: ['was not built: the state key could not be formed'] }],
      check: (report) => expect(report.internalErrors).toEqual([]),
    },
    {
      name: 'an exploration budget of 10 samples runs out before every floor was tried',
      spec: lift(),
      config: { rollouts: 1, thresholds: { 'empirical-model.exploreBudget': 10, 'empirical-model.tries': 5 } },
      findings: [
        {
          says: [
            'the exploration budget (10 samples) ran out before every state key was tried 5 times with every action',
            'raise exploreBudget or keyCap',
          ],
        },
      ],
      check: (report) => expect(report.empirical?.model.samples?.complete).toBe(false),
    },
  ],
});
