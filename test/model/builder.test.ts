/**
 * ModelBuilder's typed-array storage: whatever order the choices come in and however much room is
 * reserved, the model is the CSR layout of the same per-state lists, written here the plain way
 * (each state's choices in the order they were added, each choice's outcomes in order).
 */
import { describe, expect, it } from 'vitest';
import { ModelBuilder, type BuilderReserve, type CompiledModel } from '../../server/src/model/compiled';
import { seededRandom } from '../reference/gridworlds';

const NOWHERE = { start: 0, end: 0 };

interface PlainOutcome {
  target: number;
  probability: number;
  reward: number;
  terms?: Array<[string, number]>;
  shaping?: number;
}
interface PlainChoice {
  state: number;
  action: string;
  transition: number;
  outcomes: PlainOutcome[];
}

/** A random list of choices: `states` states (every fifth terminal), 1-3 actions, 1-5 outcomes, "speed" terms on some outcomes. */
function randomChoices(states: number, seed: number, withShaping: boolean): PlainChoice[] {
  const random = seededRandom(seed);
  const out: PlainChoice[] = [];
  for (let s = 0; s < states; s++) {
    if (s % 5 === 4) continue;
    const actions = 1 + Math.floor(random() * 3);
    for (let a = 0; a < actions; a++) {
      const count = 1 + Math.floor(random() * 5);
      const outcomes: PlainOutcome[] = [];
      for (let i = 0; i < count; i++) {
        const reward = Math.round(random() * 100) / 10;
        const outcome: PlainOutcome = { target: Math.floor(random() * states), probability: 1 / count, reward };
        // "speed" appears on some outcomes, twice on a few (the builder adds the parts); "unused" never.
        if (random() < 0.3)
          outcome.terms =
            random() < 0.2
              ? [
                  ['speed', 1],
                  ['speed', 0.5],
                ]
              : [['speed', reward]];
        if (withShaping) outcome.shaping = (i - 1) / 4;
        outcomes.push(outcome);
      }
      out.push({ state: s, action: `a${a}`, transition: out.length, outcomes });
    }
  }
  return out;
}

function build(states: number, choices: readonly PlainChoice[], reserve?: BuilderReserve): CompiledModel {
  const builder = new ModelBuilder({ discount: 0.9, maximize: true, terms: ['speed', 'unused'], reserve });
  for (let s = 0; s < states; s++)
    builder.addState(`s${s}`, s % 5 === 4 ? 'goal' : undefined, NOWHERE, s === 2 ? 'the third' : undefined);
  for (const c of choices) builder.addChoice(c.state, c.action, c.transition, c.outcomes);
  return builder.finish([
    { state: 0, probability: 0.25 },
    { state: 1, probability: 0.75 },
  ]);
}

/** The model as per-state lists of [action, transition, outcomes as [target, probability, reward, speed, shaping]]. */
function listsOf(model: CompiledModel): unknown[] {
  const states: unknown[] = [];
  for (let s = 0; s < model.stateCount; s++) {
    const choices: unknown[] = [];
    for (let c = model.choiceStart[s]; c < model.choiceStart[s + 1]; c++) {
      const outcomes: number[][] = [];
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        outcomes.push([
          model.outcomeTarget[k],
          model.outcomeProb[k],
          model.outcomeReward[k],
          model.outcomeTermReward[0][k],
          model.outcomePotentialReward?.[k] ?? 0,
        ]);
      }
      choices.push([model.actionNames[model.choiceAction[c]], model.choiceTransition[c], outcomes]);
    }
    states.push(choices);
  }
  return states;
}

/** The same lists, written directly from the choices. */
function expectedLists(states: number, choices: readonly PlainChoice[]): unknown[] {
  const out: unknown[][] = Array.from({ length: states }, () => []);
  for (const c of choices) {
    out[c.state].push([
      c.action,
      c.transition,
      c.outcomes.map((o) => [
        o.target,
        o.probability,
        o.reward,
        (o.terms ?? []).reduce((sum, [, v]) => sum + v, 0),
        o.shaping ?? 0,
      ]),
    ]);
  }
  return out;
}

/** Deterministic shuffle (Fisher-Yates with the seeded generator). */
function shuffled<T>(items: readonly T[], seed: number): T[] {
  const random = seededRandom(seed);
  const out = items.slice();
  for (let i = out.length - 1; i > 0; i--) {
    const j = Math.floor(random() * (i + 1));
    [out[i], out[j]] = [out[j], out[i]];
  }
  return out;
}

describe('ModelBuilder', () => {
  const STATES = 300;
  const choices = randomChoices(STATES, 7, false);
  const outcomeTotal = choices.reduce((sum, c) => sum + c.outcomes.length, 0);
  const expected = expectedLists(STATES, choices);

  const cases: Array<[string, readonly PlainChoice[], BuilderReserve | undefined]> = [
    ['in state order, no room reserved (the columns double many times)', choices, undefined],
    [
      'in state order, exactly the room needed',
      choices,
      { states: STATES, choices: choices.length, outcomes: outcomeTotal },
    ],
    [
      'in state order, far more room than needed',
      choices,
      { states: 4 * STATES, choices: 4 * choices.length, outcomes: 4 * outcomeTotal },
    ],
    ['shuffled, too little room reserved', shuffled(choices, 3), { states: 10, choices: 10, outcomes: 10 }],
    ['shuffled, no room reserved', shuffled(choices, 4), undefined],
  ];
  it.each(cases)('lays out choices added %s as the per-state lists', (_name, order, reserve) => {
    const model = build(STATES, order, reserve);
    expect(model.stateCount).toBe(STATES);
    expect(model.choiceCount).toBe(choices.length);
    expect(model.outcomeCount).toBe(outcomeTotal);
    // Choices of one state keep the order they were added in; a shuffle changes that order, so compare as sets there.
    const actual = listsOf(model);
    if (order === choices) expect(actual).toEqual(expected);
    else {
      const key = (lists: unknown[]) =>
        lists.map((choicesOfState) => (choicesOfState as unknown[]).map((c) => JSON.stringify(c)).sort());
      expect(key(actual)).toEqual(key(expected));
    }
    // Exact lengths: the model keeps no unused tail that a reader could mistake for data.
    expect(model.terminal.length).toBe(STATES);
    expect(model.choiceAction.length).toBe(choices.length);
    expect(model.choiceTransition.length).toBe(choices.length);
    expect(model.outcomeStart.length).toBe(choices.length + 1);
    expect(model.outcomeStart[choices.length]).toBe(outcomeTotal);
    for (const column of [model.outcomeTarget, model.outcomeProb, model.outcomeReward, ...model.outcomeTermReward])
      expect(column.length).toBe(outcomeTotal);
    // A term no outcome uses still has its (all-zero) column; no shaping was given, so there is no shaping column.
    expect(model.termNames).toEqual(['speed', 'unused']);
    expect(model.outcomeTermReward[1].every((v) => v === 0)).toBe(true);
    expect(model.outcomePotentialReward).toBeUndefined();
    expect(Array.from(model.terminal.subarray(0, 6))).toEqual([0, 0, 0, 0, 1, 0]);
    expect(model.stateLabels?.[2]).toBe('the third');
    expect(model.stateLabels?.[3]).toBeUndefined();
    expect(Array.from(model.startState)).toEqual([0, 1]);
    expect(Array.from(model.startProb)).toEqual([0.25, 0.75]);
  });

  it('keeps the shaping part of each outcome, in state order and shuffled', () => {
    const shaped = randomChoices(120, 9, true);
    const want = expectedLists(120, shaped);
    expect(listsOf(build(120, shaped))).toEqual(want);
    const model = build(120, shuffled(shaped, 5));
    expect(model.outcomePotentialReward?.length).toBe(model.outcomeCount);
    const key = (lists: unknown[]) =>
      lists.map((choicesOfState) => (choicesOfState as unknown[]).map((c) => JSON.stringify(c)).sort());
    expect(key(listsOf(model))).toEqual(key(want));
  });

  it('leaves stateLabels undefined when no state has a label, and refuses to be used after finish()', () => {
    const builder = new ModelBuilder({ discount: 1, maximize: true });
    builder.addState('a', undefined, NOWHERE);
    builder.addState('b', 'goal', NOWHERE);
    builder.addChoice(0, 'go', -1, [{ target: 1, probability: 1, reward: 1 }]);
    const model = builder.finish([{ state: 0, probability: 1 }]);
    expect(model.stateLabels).toBeUndefined();
    expect(model.outcomeTermReward).toEqual([]);
    expect(() => builder.addChoice(0, 'go', -1, [{ target: 0, probability: 1, reward: 0 }])).toThrow(/already called/);
    expect(model.outcomeCount).toBe(1);
  });
});
