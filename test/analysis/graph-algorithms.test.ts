/**
 * Graph algorithms on hand-built models: SCCs (checked against the definition: mutual
 * reachability), maximal end components (checked against the definition in de Alfaro 1997: a
 * set of states with choices that keep every outcome inside, strongly connected, and maximal),
 * almost-sure reachability, and the iterative SCC algorithm on a path of 300,000 states.
 */
import { describe, expect, it } from 'vitest';
import { maximalEndComponents } from '../../server/src/analysis/end-components';
import { buildModelGraph, graphWithin } from '../../server/src/analysis/graph';
import {
  almostSureReach,
  canReach,
  forwardReachable,
  reachableFromStart,
} from '../../server/src/analysis/reachability';
import { stronglyConnectedComponents } from '../../server/src/analysis/scc';
import { ModelBuilder, type CompiledModel } from '../../server/src/model/compiled';
import { handModel, randomModel } from '../reference/gridworlds';

const ids = (model: CompiledModel, states: ArrayLike<number>): string[] =>
  Array.from(states, (s) => model.stateIds[s]).sort();

describe('strongly connected components (Tarjan 1972, iterative)', () => {
  it('agrees with mutual reachability on seeded random models of our own', () => {
    for (let seed = 1; seed <= 10; seed++) {
      const model = randomModel(seed, 30, 2, 2, 0.9, 3);
      const scc = stronglyConnectedComponents(model);
      const reach = Array.from({ length: model.stateCount }, (_, s) => forwardReachable(model, [s]));
      for (let s = 0; s < model.stateCount; s++) {
        for (let t = 0; t < model.stateCount; t++) {
          const mutual = reach[s][t] === 1 && reach[t][s] === 1;
          expect(scc.componentOf[s] === scc.componentOf[t], `seed ${seed}: ${s} and ${t}`).toBe(mutual);
        }
      }
      // Reverse topological order: no edge from a component to a later one.
      const position = new Int32Array(scc.count);
      for (let i = 0; i < scc.count; i++) position[i] = i;
      for (let c = 0; c < model.choiceCount; c++) {
        let from = 0;
        while (model.choiceStart[from + 1] <= c) from++;
        for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
          expect(scc.componentOf[model.outcomeTarget[k]]).toBeLessThanOrEqual(scc.componentOf[from]);
        }
      }
    }
  });

  it('handles a path of 300,000 states without recursion (no stack overflow)', () => {
    const b = new ModelBuilder({ discount: 1, maximize: true });
    const nowhere = { start: 0, end: 0 };
    const count = 300_000;
    for (let i = 0; i < count; i++) b.addState(`s${i}`, undefined, nowhere);
    const end = b.addState('end', 'goal', nowhere);
    for (let i = 0; i < count; i++)
      b.addChoice(i, 'next', -1, [{ target: i + 1 < count ? i + 1 : end, probability: 1, reward: 1 }]);
    // A back edge from the last state to the first makes the whole path one component.
    b.addChoice(count - 1, 'back', -1, [{ target: 0, probability: 1, reward: 0 }]);
    const model = b.finish([{ state: 0, probability: 1 }]);
    const scc = stronglyConnectedComponents(model);
    expect(scc.count).toBe(2);
    expect(scc.componentOf[0]).toBe(scc.componentOf[count - 1]);
  });
});

describe('maximal end components (Courcoubetis and Yannakakis 1995; de Alfaro 1997)', () => {
  // Hand-built: {a, b} can circle forever via a.stay/b.back; c can only leave (half to a, half to
  // the goal), so it is in none; d and e circle with d.loop and e.loop; f's only choice leaves.
  const model = handModel({
    discount: 1,
    start: 'c',
    states: ['a', 'b', 'c', 'd', 'e', 'f', ['goal', 'goal']],
    choices: [
      ['a', 'stay', [['b', 1, 0]]],
      [
        'a',
        'exit',
        [
          ['goal', 0.5, 0],
          ['d', 0.5, 0],
        ],
      ],
      ['b', 'back', [['a', 1, 0]]],
      [
        'c',
        'go',
        [
          ['a', 0.5, 0],
          ['goal', 0.5, 0],
        ],
      ],
      ['d', 'loop', [['e', 1, 0]]],
      [
        'e',
        'loop',
        [
          ['d', 0.5, 0],
          ['e', 0.5, 0],
        ],
      ],
      ['e', 'leave', [['f', 1, 0]]],
      ['f', 'go', [['goal', 1, 0]]],
    ],
  });
  const graph = buildModelGraph(model);
  const mecs = maximalEndComponents(graph);

  it('finds exactly {a, b} and {d, e}', () => {
    expect(mecs.states.map((s) => ids(model, s)).sort()).toEqual([
      ['a', 'b'],
      ['d', 'e'],
    ]);
  });

  it('keeps only the choices that stay inside (a.exit and e.leave are not part of them)', () => {
    const choiceNames = mecs.choices.map((cs) =>
      Array.from(
        cs,
        (c) => `${model.stateIds[graph.choiceState[c]]}.${model.actionNames[model.choiceAction[c]]}`,
      ).sort(),
    );
    expect(choiceNames.sort()).toEqual([
      ['a.stay', 'b.back'],
      ['d.loop', 'e.loop'],
    ]);
  });

  it('satisfies the definition on seeded random models of our own: closed, strongly connected, maximal', () => {
    for (let seed = 11; seed <= 20; seed++) {
      const random = randomModel(seed, 25, 3, 2, 1, 2);
      const g = buildModelGraph(random);
      const d = maximalEndComponents(g);
      for (let i = 0; i < d.count; i++) {
        const inside = new Uint8Array(random.stateCount);
        for (const s of d.states[i]) inside[s] = 1;
        const choiceMask = new Uint8Array(random.choiceCount);
        for (const c of d.choices[i]) {
          choiceMask[c] = 1;
          for (let k = random.outcomeStart[c]; k < random.outcomeStart[c + 1]; k++)
            expect(inside[random.outcomeTarget[k]]).toBe(1);
        }
        for (const s of d.states[i]) expect(Array.from(d.choices[i]).some((c) => g.choiceState[c] === s)).toBe(true);
        const scc = stronglyConnectedComponents(random, inside, choiceMask);
        expect(scc.count, `seed ${seed}: component ${i} is strongly connected`).toBe(1);
      }
    }
  });

  it("gives the same components when the first round reuses the whole graph's SCCs", () => {
    for (let seed = 31; seed <= 36; seed++) {
      const random = randomModel(seed, 40, 3, 2, 1, 3);
      const g = buildModelGraph(random);
      const live = new Uint8Array(random.stateCount);
      for (let s = 0; s < live.length; s++) live[s] = g.absorbing[s] ? 0 : 1;
      const reused = maximalEndComponents(g, undefined, undefined, stronglyConnectedComponents(random, live));
      const fresh = maximalEndComponents(g);
      expect(Array.from(reused.choiceIn)).toEqual(Array.from(fresh.choiceIn));
      expect(reused.states.map((st) => Array.from(st)).sort()).toEqual(fresh.states.map((st) => Array.from(st)).sort());
    }
  });

  it('is maximal: every end component found by brute force over choice subsets lies inside one MEC', () => {
    let found = 0;
    for (let seed = 21; seed <= 26; seed++) {
      const random = randomModel(seed, 7, 2, 2, 1, 1);
      const g = buildModelGraph(random);
      const d = maximalEndComponents(g);
      const choices = random.choiceCount;
      for (let subset = 1; subset < 1 << choices; subset++) {
        const chosen = new Uint8Array(choices);
        const owners = new Uint8Array(random.stateCount);
        for (let c = 0; c < choices; c++) {
          if (subset & (1 << c)) {
            chosen[c] = 1;
            owners[g.choiceState[c]] = 1;
          }
        }
        let closed = true;
        for (let c = 0; c < choices && closed; c++) {
          if (!chosen[c]) continue;
          for (let k = random.outcomeStart[c]; k < random.outcomeStart[c + 1]; k++)
            if (!owners[random.outcomeTarget[k]]) closed = false;
        }
        if (!closed || stronglyConnectedComponents(random, owners, chosen).count !== 1) continue;
        // An end component: all its states share one MEC, which holds all its choices.
        found++;
        const members = Array.from(owners.entries())
          .filter(([, v]) => v)
          .map(([s]) => s);
        const mec = d.componentOf[members[0]];
        expect(mec, `seed ${seed}: subset ${subset}`).toBeGreaterThanOrEqual(0);
        for (const s of members) expect(d.componentOf[s]).toBe(mec);
        for (let c = 0; c < choices; c++) if (chosen[c]) expect(d.choiceIn[c]).toBe(1);
      }
    }
    expect(found).toBeGreaterThan(10);
  });
});

describe('reachability', () => {
  const model = handModel({
    discount: 1,
    start: 's',
    states: ['s', 'risky', 'loop', 'unseen', ['goal', 'goal'], ['pit', 'failure']],
    choices: [
      ['s', 'safe', [['goal', 1, 0]]],
      ['s', 'gamble', [['risky', 1, 0]]],
      [
        'risky',
        'go',
        [
          ['goal', 0.5, 0],
          ['loop', 0.5, 0],
        ],
      ],
      ['loop', 'spin', [['loop', 1, 0]]],
      ['unseen', 'go', [['pit', 1, 0]]],
    ],
  });
  const graph = buildModelGraph(model);

  it('marks states no policy reaches from the start', () => {
    expect(
      ids(
        model,
        Array.from(reachableFromStart(model).entries())
          .filter(([, v]) => v)
          .map(([s]) => s),
      ),
    ).toEqual(['goal', 'loop', 'risky', 's']);
  });

  it('reaches the goal almost surely only from states with a sure route (de Alfaro 1997)', () => {
    const goal = new Uint8Array(model.stateCount);
    goal[model.stateIndex.get('goal')!] = 1;
    const sure = almostSureReach(graph, goal);
    const names = ids(
      model,
      Array.from(sure.entries())
        .filter(([, v]) => v)
        .map(([s]) => s),
    );
    expect(names).toEqual(['goal', 's']);
  });
});

describe('the graph within a set of choices', () => {
  it('answers reachability over the allowed choices as the whole graph does with the mask, on seeded random models', () => {
    for (let seed = 1; seed <= 8; seed++) {
      const model = randomModel(seed, 40, 3, 2, 0.9, 4);
      const graph = buildModelGraph(model);
      // A policy: one choice per state, picked by the seed.
      const allowed = new Uint8Array(model.choiceCount);
      for (let s = 0; s < model.stateCount; s++) {
        const count = model.choiceStart[s + 1] - model.choiceStart[s];
        if (count > 0) allowed[model.choiceStart[s] + ((s * seed) % count)] = 1;
      }
      const within = graphWithin(graph, allowed);
      for (let t = 0; t < model.stateCount; t += 3) {
        const targets = new Uint8Array(model.stateCount);
        targets[t] = 1;
        targets[model.stateCount - 1] = 1;
        expect(Array.from(canReach(within, targets)), `seed ${seed}, target ${t}`).toEqual(
          Array.from(canReach(graph, targets, allowed)),
        );
      }
      // Only allowed choices remain, each as often as in the whole graph.
      let expected = 0;
      for (let i = 0; i < graph.predChoice.length; i++) if (allowed[graph.predChoice[i]]) expected++;
      expect(within.predChoice.length).toBe(expected);
      expect(Array.from(within.predChoice).every((c) => allowed[c] === 1)).toBe(true);
    }
  });
});
