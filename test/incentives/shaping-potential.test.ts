/**
 * The exact potential check behind shaping-not-potential: recoverPotential on compiled specs, without
 * the value analysis. The defining property (Ng, Harada and Russell, 1999, "Policy invariance under
 * reward transformations", the form F = discount*Phi(s') - Phi(s) of Theorem 1) is checked in both
 * directions: amounts built from a potential are recognised and the potential recovered; amounts that
 * break one equation are refused with a witness whose arithmetic is checked here.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { compileSpec } from '../../server/src/model/compile';
import type { CompiledModel } from '../../server/src/model/compiled';
import { recoverPotential, type ShapingStep } from '../../server/src/analysis/shaping';
import { parseJsonSpec } from '../../server/src/load/json';
import type { ParsedSpec } from '../../server/src/load/types';

function compiled(spec: object): { spec: ParsedSpec; model: CompiledModel } {
  const parsed = parseJsonSpec(JSON.stringify(spec));
  expect(parsed.findings).toEqual([]);
  const { model, reason } = compileSpec(parsed.spec);
  if (!model) throw new Error(`spec did not compile: ${reason}`);
  return { spec: parsed.spec, model };
}

/** A spec whose `progress` term is marked shaping; `edges` are [from, action, to, progress, task reward]. */
function shapedSpec(
  discount: number,
  edges: Array<[string, string, string, number, number]>,
  terminals: Record<string, string>,
  start: string,
) {
  const states: Record<string, object> = {};
  const actions: Record<string, string[]> = {};
  for (const [from, action, to] of edges) {
    states[from] ??= {};
    states[to] ??= {};
    (actions[from] ??= []).push(action);
  }
  for (const [id, kind] of Object.entries(terminals)) states[id] = { terminal: kind };
  for (const [id, list] of Object.entries(actions)) if (!terminals[id]) states[id] = { actions: list };
  return {
    discount,
    start,
    rewardTerms: { task: { direction: 'either' }, progress: { direction: 'either', shaping: true } },
    states,
    transitions: edges.map(([from, action, to, progress, task]) => ({ from, action, to, reward: { task, progress } })),
  };
}

/** Re-derives, from the model's own numbers, the value each derivation claims for Phi at the conflict state. */
function replay(model: CompiledModel, start: number, steps: ShapingStep[]): number {
  // Derivations run from the anchor to the state; each step solves its equation for the next unknown.
  let value = start;
  for (const step of steps) {
    value = step.forward ? (value + step.amount) / model.discount : model.discount * value - step.amount;
  }
  return value;
}

describe('recoverPotential: amounts built from a potential (Ng, Harada and Russell 1999, F = discount*Phi(next) - Phi(state))', () => {
  it('recovers the potential of a chain with Phi = 0 on the terminal', () => {
    const phi: Record<string, number> = { a: 3, b: 1.5, goal: 0 };
    const discount = 0.9;
    const f = (s: string, t: string) => discount * phi[t] - phi[s];
    const { spec, model } = compiled(
      shapedSpec(
        discount,
        [
          ['a', 'go', 'b', f('a', 'b'), -1],
          ['b', 'go', 'goal', f('b', 'goal'), 10],
          ['b', 'back', 'a', f('b', 'a'), -1],
        ],
        { goal: 'goal' },
        'a',
      ),
    );
    const recovery = recoverPotential(spec, model);
    expect(recovery.shapingTerms).toEqual(['progress']);
    expect(recovery.conflict).toBeUndefined();
    expect(recovery.potential![model.stateIndex.get('a')!]).toBeCloseTo(3, 12);
    expect(recovery.potential![model.stateIndex.get('b')!]).toBeCloseTo(1.5, 12);
    expect(recovery.potential![model.stateIndex.get('goal')!]).toBe(0);
  });

  it('fixes the potential of a continuing task (no terminal, discount < 1) by going around a loop', () => {
    const phi: Record<string, number> = { x: 2, y: -1, z: 0.5 };
    const discount = 0.8;
    const f = (s: string, t: string) => discount * phi[t] - phi[s];
    const { spec, model } = compiled(
      shapedSpec(
        discount,
        [
          ['x', 'go', 'y', f('x', 'y'), 0],
          ['y', 'go', 'z', f('y', 'z'), 0],
          ['z', 'go', 'x', f('z', 'x'), 1],
          ['z', 'stay', 'z', f('z', 'z'), 0],
        ],
        {},
        'x',
      ),
    );
    const recovery = recoverPotential(spec, model);
    expect(recovery.conflict).toBeUndefined();
    // A loop fixes Phi uniquely when discount < 1: (discount^L - 1) Phi(v0) = sum discount^i F_i.
    for (const [id, value] of Object.entries(phi))
      expect(recovery.potential![model.stateIndex.get(id)!]).toBeCloseTo(value, 10);
  });

  it('property: random graphs, discounts and potentials with Phi = 0 on terminals are always recognised', () => {
    const arbitrary = fc.record({
      stateCount: fc.integer({ min: 1, max: 7 }),
      discount: fc.oneof(fc.constant(1), fc.double({ min: 0.05, max: 0.999, noNaN: true })),
      potential: fc.array(fc.double({ min: -50, max: 50, noNaN: true }), { minLength: 7, maxLength: 7 }),
      edges: fc.array(fc.tuple(fc.nat(6), fc.nat(8)), { minLength: 1, maxLength: 20 }),
    });
    fc.assert(
      fc.property(arbitrary, ({ stateCount, discount, potential, edges }) => {
        // States s0..s{n-1}; targets n and n+1 stand for the two terminals.
        const name = (i: number) => (i >= stateCount ? (i === stateCount ? 'goal' : 'fail') : `s${i}`);
        const phi = (i: number) => (i >= stateCount ? 0 : potential[i]);
        const list: Array<[string, string, string, number, number]> = [];
        const used = new Set<string>();
        for (const [from, to] of edges) {
          const s = from % stateCount;
          const t = to % (stateCount + 2);
          const action = `to-${name(t)}`;
          if (used.has(`${s}/${action}`)) continue;
          used.add(`${s}/${action}`);
          list.push([name(s), action, name(t), discount * phi(t) - phi(s), 0]);
        }
        for (let s = 0; s < stateCount; s++) {
          if (!used.has(`${s}/to-goal`)) list.push([name(s), 'to-goal', 'goal', -phi(s), 1]);
        }
        const { spec, model } = compiled(shapedSpec(discount, list, { goal: 'goal', fail: 'failure' }, 's0'));
        const recovery = recoverPotential(spec, model);
        expect(recovery.conflict).toBeUndefined();
        // Every state reaches the goal, so Phi is anchored everywhere and must come back exactly.
        for (let s = 0; s < stateCount; s++) {
          expect(Math.abs(recovery.potential![model.stateIndex.get(name(s))!] - potential[s])).toBeLessThan(
            1e-7 * (1 + Math.abs(potential[s])),
          );
        }
      }),
      { numRuns: 200 },
    );
  });
});

describe('recoverPotential: amounts that no potential produces', () => {
  it('discount 1: a bonus for going forward and nothing for going back nets +1 per lap', () => {
    const { spec, model } = compiled(
      shapedSpec(
        1,
        [
          ['hall', 'ahead', 'pad', 1, -1],
          ['pad', 'back', 'hall', 0, -1],
          ['pad', 'exit', 'goal', 0, 10],
        ],
        { goal: 'goal' },
        'hall',
      ),
    );
    const { conflict, potential } = recoverPotential(spec, model);
    expect(potential).toBeUndefined();
    expect(conflict).toBeDefined();
    expect(Math.abs(conflict!.net!)).toBeCloseTo(1, 12);
    // The witness is the two-step cycle hall -> pad -> hall, nothing else.
    const outcomes = [...conflict!.first.steps, ...conflict!.second.steps]
      .map((s) => `${model.stateIds[s.from]}>${model.stateIds[s.to]}`)
      .sort();
    expect(outcomes).toEqual(['hall>pad', 'pad>hall']);
    expect(Math.abs(conflict!.first.value - conflict!.second.value)).toBeCloseTo(1, 12);
  });

  it('discount < 1: two routes to terminals that imply different potentials for one state', () => {
    const { spec, model } = compiled(
      shapedSpec(
        0.9,
        [
          ['s', 'win', 'goal', 5, 1],
          ['s', 'lose', 'fail', 3, -1],
        ],
        { goal: 'goal', fail: 'failure' },
        's',
      ),
    );
    const { conflict } = recoverPotential(spec, model);
    expect(conflict).toBeDefined();
    expect(conflict!.anchor.kind).toBe('terminal');
    expect(model.stateIds[conflict!.state]).toBe('s');
    // With Phi = 0 on terminals, s --win--> goal (+5) needs Phi(s) = -5 and s --lose--> fail (+3) needs -3.
    expect([conflict!.first.value, conflict!.second.value].sort((a, b) => a - b)).toEqual([-5, -3]);
    expect(replay(model, 0, conflict!.first.steps)).toBeCloseTo(conflict!.first.value, 12);
    expect(replay(model, 0, conflict!.second.steps)).toBeCloseTo(conflict!.second.value, 12);
  });

  it('property: changing one amount on a state with two routes to the goal is always caught', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.1, max: 1, noNaN: true }),
        fc.array(fc.double({ min: -20, max: 20, noNaN: true }), { minLength: 3, maxLength: 3 }),
        fc.double({ min: 0.01, max: 5, noNaN: true }),
        fc.nat(3),
        (discount, [pa, pb, pc], delta, which) => {
          const phi: Record<string, number> = { a: pa, b: pb, c: pc, goal: 0 };
          const f = (s: string, t: string) => discount * phi[t] - phi[s];
          const edges: Array<[string, string, string, number, number]> = [
            ['a', 'left', 'b', f('a', 'b'), 0],
            ['a', 'right', 'c', f('a', 'c'), 0],
            ['b', 'go', 'goal', f('b', 'goal'), 1],
            ['c', 'go', 'goal', f('c', 'goal'), 1],
          ];
          edges[which][3] += delta;
          const { spec, model } = compiled(shapedSpec(discount, edges, { goal: 'goal' }, 'a'));
          const { conflict } = recoverPotential(spec, model);
          expect(conflict).toBeDefined();
          // Both derivations must be exact consequences of the equations they list.
          const anchorValue = 0;
          expect(replay(model, anchorValue, conflict!.first.steps)).toBeCloseTo(conflict!.first.value, 9);
          expect(replay(model, anchorValue, conflict!.second.steps)).toBeCloseTo(conflict!.second.value, 9);
          expect(Math.abs(conflict!.first.value - conflict!.second.value)).toBeGreaterThan(1e-6);
        },
      ),
      { numRuns: 200 },
    );
  });

  it('discount 0: every outcome leaving a state must carry the same amount', () => {
    const ok = compiled(
      shapedSpec(
        0,
        [
          ['s', 'a', 'goal', 2, 0],
          ['s', 'b', 't', 2, 0],
          ['t', 'a', 'goal', -1, 0],
        ],
        { goal: 'goal' },
        's',
      ),
    );
    expect(recoverPotential(ok.spec, ok.model).conflict).toBeUndefined();
    expect(recoverPotential(ok.spec, ok.model).potential![ok.model.stateIndex.get('s')!]).toBe(-2);
    const bad = compiled(
      shapedSpec(
        0,
        [
          ['s', 'a', 'goal', 2, 0],
          ['s', 'b', 't', 1, 0],
          ['t', 'a', 'goal', -1, 0],
        ],
        { goal: 'goal' },
        's',
      ),
    );
    const { conflict } = recoverPotential(bad.spec, bad.model);
    expect([conflict!.first.value, conflict!.second.value].sort((a, b) => a - b)).toEqual([-2, -1]);
  });

  it('a tolerance absorbs hand-rounded amounts only when asked to', () => {
    // Phi(a) = 1/3, Phi(goal) = 0: the exact amount a --go--> goal is -1/3, written here as -0.3333.
    const { spec, model } = compiled(
      shapedSpec(
        1,
        [
          ['a', 'go', 'goal', -0.3333, 1],
          ['a', 'loop', 'a', 0, 0],
        ],
        { goal: 'goal' },
        'a',
      ),
    );
    expect(recoverPotential(spec, model).conflict).toBeUndefined();
    const two = compiled(
      shapedSpec(
        1,
        [
          ['a', 'go', 'b', 0.3333, 0],
          ['b', 'go', 'goal', -2 / 3, 1],
          ['a', 'skip', 'goal', -1 / 3, 0],
        ],
        { goal: 'goal' },
        'a',
      ),
    );
    expect(recoverPotential(two.spec, two.model).conflict).toBeDefined();
    expect(recoverPotential(two.spec, two.model, 1e-3).conflict).toBeUndefined();
  });
});
