/**
 * The incentive rules never fail on well-formed specs of any shape: random MDPs with discounts from 0 to
 * 1, horizons, minimize, reward terms (some marked shaping) and potentials (also on terminals). Every
 * finding they raise points inside the document and names only states of the spec.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { checkSpec } from '../helpers/specs';
import { INCENTIVE_RULES } from './incentive-rules';

const arbitrarySpec = fc
  .record({
    states: fc.integer({ min: 1, max: 5 }),
    discount: fc.constantFrom(0, 0.5, 0.9, 0.99, 1),
    horizon: fc.option(fc.integer({ min: 1, max: 6 }), { nil: undefined }),
    minimize: fc.boolean(),
    choices: fc.array(
      fc.array(
        fc.array(
          fc.record({
            target: fc.nat(7),
            weight: fc.integer({ min: 1, max: 4 }),
            task: fc.integer({ min: -5, max: 5 }),
            shape: fc.integer({ min: -2, max: 2 }),
          }),
          {
            minLength: 1,
            maxLength: 3,
          },
        ),
        { minLength: 1, maxLength: 3 },
      ),
      { minLength: 5, maxLength: 5 },
    ),
    potential: fc.option(fc.array(fc.integer({ min: -3, max: 3 }), { minLength: 8, maxLength: 8 }), { nil: undefined }),
    kinds: fc.tuple(fc.constantFrom('goal', 'failure', 'neutral'), fc.constantFrom('goal', 'failure', 'neutral')),
  })
  .map(({ states, discount, horizon, minimize, choices, potential, kinds }) => {
    const name = (i: number) => (i < states ? `s${i}` : i === states ? 't0' : 't1');
    const stateMap: Record<string, object> = { t0: { terminal: kinds[0] }, t1: { terminal: kinds[1] } };
    const transitions: object[] = [];
    for (let s = 0; s < states; s++) {
      stateMap[name(s)] = { actions: choices[s].map((_, a) => `a${a}`) };
      choices[s].forEach((outcomes, a) => {
        const merged = new Map<number, { weight: number; task: number; shape: number }>();
        for (const o of outcomes) {
          const t = o.target % (states + 2);
          const entry = merged.get(t) ?? { weight: 0, task: o.task, shape: o.shape };
          entry.weight += o.weight;
          merged.set(t, entry);
        }
        const total = [...merged.values()].reduce((sum, o) => sum + o.weight, 0);
        transitions.push({
          from: name(s),
          action: `a${a}`,
          to: [...merged].map(([t, o]) => ({
            state: name(t),
            probability: o.weight / total,
            reward: { task: o.task, progress: o.shape },
          })),
        });
      });
    }
    return {
      name: 'random',
      objective: minimize ? 'minimize' : 'maximize',
      discount,
      ...(horizon !== undefined ? { horizon } : {}),
      start: 's0',
      actions: ['a0', 'a1', 'a2'],
      rewardTerms: { task: { direction: 'penalty' }, progress: { direction: 'either', shaping: true } },
      states: stateMap,
      ...(potential
        ? { shaping: { potential: Object.fromEntries(potential.slice(0, states + 2).map((v, i) => [name(i), v])) } }
        : {}),
      transitions,
    };
  });

describe('incentive rules on random well-formed specs', () => {
  it('never fail, and point inside the document at states of the spec', () => {
    fc.assert(
      fc.property(arbitrarySpec, (spec) => {
        const report = checkSpec(spec);
        expect(report.internalErrors).toEqual([]);
        const ids = new Set(Object.keys(spec.states));
        for (const finding of report.findings.filter((f) => INCENTIVE_RULES.includes(f.rule))) {
          expect(finding.message.length).toBeGreaterThan(20);
          expect(finding.message).not.toMatch(/NaN|undefined/);
          expect(finding.span.start).toBeGreaterThanOrEqual(0);
          expect(finding.span.end).toBeLessThanOrEqual(report.text.length);
          for (const step of finding.trace ?? []) expect(ids.has(step.state), step.state).toBe(true);
          for (const related of finding.related ?? []) expect(related.span.end).toBeLessThanOrEqual(report.text.length);
        }
      }),
      { numRuns: 300 },
    );
  });
});
