/**
 * The compiler: CSR layout, start distribution, reward terms, potential-based shaping, minimize,
 * first-wins duplicates, ignored terminal transitions, and one refusal reason per way a spec can
 * fail to be a well-defined MDP.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { chainSpec, type SpecObject } from '../helpers/specs';
import { compileSpec } from '../../server/src/model/compile';
import type { CompiledModel } from '../../server/src/model/compiled';
import { TERMINAL_CODE } from '../../server/src/model/compiled';
import { parseJsonSpec } from '../../server/src/load/json';

function compile(spec: SpecObject | string): { model?: CompiledModel; reason?: string } {
  const parsed = parseJsonSpec(typeof spec === 'string' ? spec : JSON.stringify(spec, null, 2));
  return compileSpec(parsed.spec);
}

function compiled(spec: SpecObject): CompiledModel {
  const { model, reason } = compile(spec);
  if (!model) throw new Error(`did not compile: ${reason}`);
  return model;
}

/** The outcomes of the choice of `state` taking `action`, as [target id, probability, reward]. */
function outcomesOf(model: CompiledModel, state: string, action: string): Array<[string, number, number]> {
  const s = model.stateIndex.get(state)!;
  for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
    if (model.actionNames[model.choiceAction[c]] !== action) continue;
    const result: Array<[string, number, number]> = [];
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      result.push([model.stateIds[model.outcomeTarget[k]], model.outcomeProb[k], model.outcomeReward[k]]);
    }
    return result;
  }
  throw new Error(`no choice ${state} --${action}-->`);
}

describe('compileSpec on well-defined specs', () => {
  it('lays out the chain in CSR form', () => {
    const model = compiled(chainSpec());
    expect(model.stateIds).toEqual(['a', 'b', 'goal']);
    expect(model.stateCount).toBe(3);
    expect(model.choiceCount).toBe(2);
    expect(model.outcomeCount).toBe(2);
    expect([...model.choiceStart]).toEqual([0, 1, 2, 2]);
    expect([...model.outcomeStart]).toEqual([0, 1, 2]);
    expect([...model.outcomeTarget]).toEqual([1, 2]);
    expect([...model.outcomeProb]).toEqual([1, 1]);
    expect([...model.outcomeReward]).toEqual([-1, 10]);
    expect([...model.terminal]).toEqual([0, 0, TERMINAL_CODE.goal]);
    expect([...model.startState]).toEqual([0]);
    expect([...model.startProb]).toEqual([1]);
    expect(model.discount).toBe(0.9);
    expect(model.maximize).toBe(true);
    expect(model.horizon).toBeUndefined();
    expect(model.choiceTransition).toBeInstanceOf(Int32Array);
    expect(model.outcomeProb).toBeInstanceOf(Float64Array);
  });

  it('maps every choice back to the spec transition that defined it', () => {
    const text = JSON.stringify(chainSpec());
    const parsed = parseJsonSpec(text);
    const model = compileSpec(parsed.spec).model!;
    for (let c = 0; c < model.choiceCount; c++) {
      const transition = parsed.spec.transitions[model.choiceTransition[c]];
      expect(model.actionNames[model.choiceAction[c]]).toBe(transition.action);
    }
    expect(model.stateSpan.map((span) => text.slice(span.start, span.end))).toEqual(['"a"', '"b"', '"goal"']);
  });

  it('reads the start as a uniform list and as a map, merging repeated ids', () => {
    const list = compiled(chainSpec({ start: ['a', 'b'] }));
    expect([...list.startProb]).toEqual([0.5, 0.5]);
    const map = compiled(chainSpec({ start: { a: 0.25, b: 0.75 } }));
    expect([...map.startState].map((s) => map.stateIds[s])).toEqual(['a', 'b']);
    expect([...map.startProb]).toEqual([0.25, 0.75]);
  });

  it('expands list from/action into one choice per pair', () => {
    const model = compiled({
      discount: 1,
      start: 'a',
      actions: ['left', 'right'],
      states: { a: {}, b: {}, end: { terminal: 'neutral' } },
      transitions: [{ from: ['a', 'b'], action: ['left', 'right'], to: { end: 0.5, a: 0.5 }, reward: -1 }],
    });
    expect(model.choiceCount).toBe(4);
    expect(outcomesOf(model, 'b', 'right')).toEqual([
      ['end', 0.5, -1],
      ['a', 0.5, -1],
    ]);
  });

  it('keeps the first of duplicate definitions and ignores transitions out of terminals', () => {
    const model = compiled(
      chainSpec({
        transitions: [
          { from: 'a', action: 'go', to: 'b', reward: -1 },
          { from: 'a', action: 'go', to: 'goal', reward: 100 },
          { from: 'b', action: 'go', to: 'goal', reward: 10 },
          { from: 'goal', action: 'go', to: 'a', reward: 5 },
        ],
      }),
    );
    expect(outcomesOf(model, 'a', 'go')).toEqual([['b', 1, -1]]);
    expect(model.choiceCount).toBe(2);
    const goal = model.stateIndex.get('goal')!;
    expect(model.choiceStart[goal + 1] - model.choiceStart[goal]).toBe(0);
  });

  it('sums reward terms into the scalar reward and keeps each declared term', () => {
    const model = compiled(
      chainSpec({
        rewardTerms: { time: { direction: 'penalty' }, delivery: { direction: 'bonus' } },
        transitions: [
          { from: 'a', action: 'go', to: 'b', reward: { time: -1 } },
          { from: 'b', action: 'go', to: [{ state: 'goal', probability: 1, reward: { time: -1, delivery: 20 } }] },
        ],
      }),
    );
    expect(model.termNames).toEqual(['time', 'delivery']);
    expect([...model.outcomeReward]).toEqual([-1, 19]);
    expect([...model.outcomeTermReward[0]]).toEqual([-1, -1]);
    expect([...model.outcomeTermReward[1]]).toEqual([0, 20]);
  });

  it('tracks the terms a spec uses when it declares none', () => {
    const model = compiled(
      chainSpec({
        transitions: [
          { from: 'a', action: 'go', to: 'b', reward: { fuel: -2 } },
          { from: 'b', action: 'go', to: 'goal', reward: 3 },
        ],
      }),
    );
    expect(model.termNames).toEqual(['fuel']);
    expect([...model.outcomeTermReward[0]]).toEqual([-2, 0]);
  });

  it('adds potential-based shaping F = discount * Phi(next) - Phi(state)', () => {
    // Ng, Harada and Russell (1999), "Policy invariance under reward transformations", Theorem 1:
    // F(s, a, s') = gamma * Phi(s') - Phi(s). Phi(a) = 2, Phi(b) = 5, Phi(goal) = 1 (a terminal's
    // potential is used as given; the terminal-potential rule warns about it), discount 0.9.
    const model = compiled(chainSpec({ shaping: { potential: { a: 2, b: 5, goal: 1 } } }));
    const fA = 0.9 * 5 - 2; // 2.5
    const fB = 0.9 * 1 - 5; // -4.1
    expect([...model.outcomePotentialReward!]).toEqual([fA, fB]);
    expect([...model.outcomeReward]).toEqual([-1 + fA, 10 + fB]);
    expect([...model.potential!]).toEqual([2, 5, 1]);
  });

  it('gives unlisted states potential 0 and keeps the shaping arrays even when every F is 0', () => {
    const partial = compiled(chainSpec({ shaping: { potential: { b: 1 } } }));
    expect([...partial.outcomePotentialReward!]).toEqual([0.9, -1]);
    const zero = compiled(chainSpec({ shaping: { potential: {} } }));
    expect(zero.outcomePotentialReward).toBeUndefined();
    expect(zero.potential).toBeUndefined();
    const allZero = compiled(chainSpec({ shaping: { potential: { a: 0 } } }));
    expect([...allZero.outcomePotentialReward!]).toEqual([0, 0]);
  });

  it('keeps costs as written under minimize', () => {
    const model = compiled(chainSpec({ objective: 'minimize', horizon: 12 }));
    expect(model.maximize).toBe(false);
    expect([...model.outcomeReward]).toEqual([-1, 10]);
    expect(model.horizon).toBe(12);
  });

  it('narrows action sets per state', () => {
    const model = compiled({
      discount: 0.5,
      start: 'a',
      actions: ['x', 'y'],
      states: { a: { actions: ['y'] }, t: { terminal: 'failure' } },
      transitions: [{ from: 'a', action: 'y', to: 't' }],
    });
    expect(model.choiceCount).toBe(1);
    expect(model.actionNames).toEqual(['y']);
  });
});

describe('compileSpec refuses specs that are not well-defined MDPs', () => {
  const cases: Array<[string, SpecObject | string, RegExp]> = [
    ['no discount', chainSpec({ discount: undefined }), /no discount/],
    ['a discount above 1', chainSpec({ discount: 1.5 }), /discount 1\.5 is not between 0 and 1/],
    [
      'an infinite discount',
      JSON.stringify(chainSpec()).replace('"discount":0.9', '"discount":1e400'),
      /discount infinity/,
    ],
    ['a fractional horizon', chainSpec({ horizon: 2.5 }), /horizon 2\.5 is not a whole number/],
    ['no states', chainSpec({ states: {} }), /declares no states/],
    ['no start', chainSpec({ start: undefined }), /no start state/],
    ['an undeclared start', chainSpec({ start: 'nowhere' }), /start names 'nowhere'/],
    [
      'start probabilities not adding to 1',
      chainSpec({ start: { a: 0.5, b: 0.4 } }),
      /start probabilities add up to 0\.9/,
    ],
    ['an undeclared potential state', chainSpec({ shaping: { potential: { zz: 1 } } }), /potential names 'zz'/],
    [
      'a transition from an undeclared state',
      chainSpec({ transitions: [...(chainSpec().transitions as object[]), { from: 'zz', action: 'go', to: 'a' }] }),
      /transitions\[2\] leaves 'zz'/,
    ],
    [
      'an undeclared target',
      chainSpec({
        transitions: [
          { from: 'a', action: 'go', to: 'bb' },
          { from: 'b', action: 'go', to: 'goal' },
        ],
      }),
      /leads to 'bb'/,
    ],
    [
      'an action the state does not offer',
      chainSpec({ transitions: [...(chainSpec().transitions as object[]), { from: 'a', action: 'fly', to: 'goal' }] }),
      /takes 'fly' in 'a'/,
    ],
    [
      'probabilities not adding to 1',
      chainSpec({
        transitions: [
          { from: 'a', action: 'go', to: { b: 0.5, goal: 0.4 } },
          { from: 'b', action: 'go', to: 'goal' },
        ],
      }),
      /add up to 0\.9, not 1/,
    ],
    [
      'a probability above 1',
      chainSpec({
        transitions: [
          { from: 'a', action: 'go', to: { b: 1.5, goal: -0.5 } },
          { from: 'b', action: 'go', to: 'goal' },
        ],
      }),
      /probability 1\.5, not between 0 and 1/,
    ],
    [
      'an infinite reward',
      JSON.stringify(chainSpec()).replace('"reward":10', '"reward":-1e400'),
      /reward -infinity toward 'goal'/,
    ],
    [
      'an infinite potential',
      JSON.stringify(chainSpec({ shaping: { potential: { a: 7 } } })).replace('"a":7', '"a":1e400'),
      /potential of 'a' is infinity/,
    ],
    [
      'a dead end',
      chainSpec({
        states: { a: {}, b: { actions: [] }, goal: { terminal: 'goal' } },
        transitions: [{ from: 'a', action: 'go', to: 'b' }],
      }),
      /non-terminal state 'b' offers no action/,
    ],
    ['no action set at all', chainSpec({ actions: undefined }), /'a' offers no action/],
    [
      'a missing outcome',
      chainSpec({ transitions: [{ from: 'a', action: 'go', to: 'b' }] }),
      /'b' offers 'go', but no transition says what it does/,
    ],
    [
      'an unreadable transition',
      chainSpec({
        transitions: [
          { from: 'a', action: 'go', to: [{ state: 'b' }] },
          { from: 'b', action: 'go', to: 'goal' },
        ],
      }),
      /transitions\[0\] \('a' --go-->\) could not be read completely/,
    ],
  ];

  it.each(cases)('%s', (_name, spec, reason) => {
    const result = compile(spec);
    expect(result.model).toBeUndefined();
    expect(result.reason).toMatch(reason);
    // One sentence: no line breaks, no trailing period chains.
    expect(result.reason).not.toMatch(/\n/);
  });
});

describe('compiled models keep the CSR invariants', () => {
  it('for random valid specs: probabilities add to 1 per choice, targets in range, terminals without choices', () => {
    const specs = fc.record({
      states: fc.integer({ min: 1, max: 6 }),
      actions: fc.integer({ min: 1, max: 3 }),
      terminals: fc.integer({ min: 0, max: 2 }),
      seed: fc.array(fc.integer({ min: 1, max: 9 }), { minLength: 60, maxLength: 60 }),
      discount: fc.double({ min: 0, max: 1, noNaN: true }),
    });
    fc.assert(
      fc.property(specs, ({ states, actions, terminals, seed, discount }) => {
        const ids = Array.from({ length: states + terminals }, (_, i) => `s${i}`);
        const actionNames = Array.from({ length: actions }, (_, i) => `a${i}`);
        const declared: Record<string, object> = {};
        ids.forEach((id, i) => (declared[id] = i >= states ? { terminal: 'goal' } : {}));
        let r = 0;
        const next = (): number => seed[r++ % seed.length];
        const transitions: object[] = [];
        for (let s = 0; s < states; s++) {
          for (const action of actionNames) {
            // Two outcomes with weights from the seed, written as exact fractions of their sum.
            const w1 = next();
            const w2 = next();
            transitions.push({
              from: ids[s],
              action,
              to: [
                { state: ids[next() % ids.length], probability: w1 / (w1 + w2), reward: next() - 5 },
                { state: ids[next() % ids.length], probability: w2 / (w1 + w2) },
              ],
            });
          }
        }
        const model = compiled({ discount, start: 's0', actions: actionNames, states: declared, transitions });
        expect(model.choiceCount).toBe(states * actions);
        for (let s = 0; s < model.stateCount; s++) {
          if (model.terminal[s]) expect(model.choiceStart[s + 1] - model.choiceStart[s]).toBe(0);
          for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
            let sum = 0;
            for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
              sum += model.outcomeProb[k];
              expect(model.outcomeTarget[k]).toBeGreaterThanOrEqual(0);
              expect(model.outcomeTarget[k]).toBeLessThan(model.stateCount);
            }
            expect(Math.abs(sum - 1)).toBeLessThanOrEqual(1e-9);
          }
        }
      }),
      { numRuns: 200 },
    );
  });
});
