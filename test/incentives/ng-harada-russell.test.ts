/**
 * Ng, Harada and Russell (1999), "Policy invariance under reward transformations" (ICML), Theorem 1 and
 * Corollary 2: adding F(s, a, s') = discount * Phi(s') - Phi(s) to the reward, with Phi = 0 on absorbing
 * (terminal) states, leaves the optimal policies unchanged, and Q'(s, a) = Q*(s, a) - Phi(s).
 *
 * Property test over random MDPs and random potentials, run through the whole pipeline (the compiler adds
 * the shaping from `shaping.potential`, the analysis solves both specs): the shaped Q bounds must match the
 * unshaped ones shifted by Phi(s), the best actions must agree wherever the unshaped gap is clear of the
 * precision, and no shaping rule may fire.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { checkSpec, findingsOf } from '../helpers/specs';

interface RandomMdp {
  discount: number;
  states: number;
  choices: Array<Array<Array<{ target: number; weight: number; reward: number }>>>;
  potential: number[];
}

/** States s0..s{n-1}; targets n and n+1 are the goal and failure terminals. */
const randomMdp: fc.Arbitrary<RandomMdp> = fc
  .record({
    undiscounted: fc.boolean(),
    discount: fc.double({ min: 0.5, max: 0.95, noNaN: true }),
    states: fc.integer({ min: 1, max: 6 }),
    seed: fc.array(
      fc.array(
        fc.array(
          fc.record({
            target: fc.nat(7),
            weight: fc.integer({ min: 1, max: 9 }),
            reward: fc.double({ min: -5, max: 5, noNaN: true }),
          }),
          {
            minLength: 1,
            maxLength: 3,
          },
        ),
        { minLength: 1, maxLength: 3 },
      ),
      { minLength: 6, maxLength: 6 },
    ),
    potential: fc.array(fc.double({ min: -10, max: 10, noNaN: true }), { minLength: 6, maxLength: 6 }),
  })
  .map(({ undiscounted, discount, states, seed, potential }) => ({
    // At discount 1 every choice also ends the episode with weight 3, so every policy ends it (values stay finite).
    discount: undiscounted ? 1 : discount,
    states,
    choices: seed.slice(0, states).map((choices) =>
      choices.map((outcomes) => {
        const list = outcomes.map((o) => ({ ...o, target: o.target % (states + 2) }));
        return undiscounted ? [...list, { target: states + (list.length % 2), weight: 3, reward: 1 }] : list;
      }),
    ),
    potential: potential.slice(0, states),
  }));

function toSpec(mdp: RandomMdp, shaped: boolean): object {
  const name = (i: number) => (i < mdp.states ? `s${i}` : i === mdp.states ? 'goal' : 'fail');
  const states: Record<string, object> = { goal: { terminal: 'goal' }, fail: { terminal: 'failure' } };
  const transitions: object[] = [];
  mdp.choices.forEach((choices, s) => {
    states[name(s)] = { actions: choices.map((_, a) => `a${a}`) };
    choices.forEach((outcomes, a) => {
      // Merge repeated targets so each outcome is one (state, probability, reward); probabilities from weights.
      const total = outcomes.reduce((sum, o) => sum + o.weight, 0);
      const merged = new Map<number, { probability: number; reward: number }>();
      for (const o of outcomes) {
        const entry = merged.get(o.target) ?? { probability: 0, reward: o.reward };
        entry.probability += o.weight / total;
        merged.set(o.target, entry);
      }
      transitions.push({
        from: name(s),
        action: `a${a}`,
        to: [...merged].map(([target, o]) => ({ state: name(target), probability: o.probability, reward: o.reward })),
      });
    });
  });
  const potential = Object.fromEntries(mdp.potential.map((phi, s) => [name(s), phi]));
  return {
    name: 'random',
    discount: mdp.discount,
    start: 's0',
    actions: ['a0', 'a1', 'a2'],
    states,
    transitions,
    ...(shaped ? { shaping: { potential } } : {}),
  };
}

describe('Ng, Harada and Russell (1999), Theorem 1 and Corollary 2, on random MDPs', () => {
  it('Q_shaped(s, a) = Q*(s, a) - Phi(s), the same best actions, and no shaping finding', () => {
    fc.assert(
      fc.property(randomMdp, (mdp) => {
        const plain = checkSpec(toSpec(mdp, false));
        const shaped = checkSpec(toSpec(mdp, true));
        expect(plain.internalErrors).toEqual([]);
        expect(shaped.internalErrors).toEqual([]);
        const a = plain.analysis!;
        const b = shaped.analysis!;
        const model = a.model;
        for (let s = 0; s < model.stateCount; s++) {
          if (model.terminal[s] !== 0) continue;
          const phi = mdp.potential[Number(model.stateIds[s].slice(1))];
          let best = -Infinity;
          for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) best = Math.max(best, a.q.lower[c]);
          for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
            // Corollary 2: the shaped Q is the unshaped Q minus Phi(s), within both bounds' widths.
            const slack =
              a.q.upper[c] -
              a.q.lower[c] +
              (b.q.upper[c] - b.q.lower[c]) +
              1e-9 * (1 + Math.abs(phi) + Math.abs(a.q.upper[c]));
            expect(b.q.lower[c]).toBeLessThanOrEqual(a.q.upper[c] - phi + slack);
            expect(b.q.upper[c]).toBeGreaterThanOrEqual(a.q.lower[c] - phi - slack);
            // Theorem 1: an action clearly worse without shaping is not best with it, and a best one stays best.
            if (a.q.upper[c] < best - 1e-4) expect(b.isBest[c], `choice ${c} of ${model.stateIds[s]}`).toBe(0);
            if (a.isBest[c] && a.q.upper[c] >= best + 1e-4) expect(b.isBest[c]).toBe(1);
          }
        }
        expect(findingsOf(shaped, 'shaping-changes-policy')).toEqual([]);
        expect(findingsOf(shaped, 'terminal-potential')).toEqual([]);
      }),
      { numRuns: 150 },
    );
  });
});
