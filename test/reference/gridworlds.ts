/**
 * Published MDPs built directly with ModelBuilder, and small helpers for hand-built models.
 * Sources: R. Sutton and A. Barto, Reinforcement Learning: An Introduction, 2nd ed., MIT Press, 2018.
 */
import { ModelBuilder, type CompiledModel } from '../../server/src/model/compiled';
import type { TerminalKind } from '../../server/src/load/types';

const NOWHERE = { start: 0, end: 0 };

/** The four moves of the book's gridworlds, as (row, column) steps. */
const MOVES: Array<[string, number, number]> = [
  ['up', -1, 0],
  ['down', 1, 0],
  ['right', 0, 1],
  ['left', 0, -1],
];

export const cell = (row: number, column: number): string => `r${row}c${column}`;

/**
 * Sutton and Barto (2018), Example 4.1: the 4x4 gridworld. Non-terminal cells 1..14, the two
 * shaded corners are one terminal state, moves off the grid leave the state unchanged, reward -1
 * on every transition, undiscounted (discount 1). Cell ids are r<row>c<column>; both corners map
 * to the terminal "T".
 */
export function example41(): CompiledModel {
  const b = new ModelBuilder({ discount: 1, maximize: true });
  const terminal = b.addState('T', 'neutral', NOWHERE);
  const id = (r: number, c: number): number =>
    (r === 0 && c === 0) || (r === 3 && c === 3) ? terminal : b.indexOf(cell(r, c))!;
  for (let r = 0; r < 4; r++)
    for (let c = 0; c < 4; c++)
      if (!((r === 0 && c === 0) || (r === 3 && c === 3))) b.addState(cell(r, c), undefined, NOWHERE);
  for (let r = 0; r < 4; r++) {
    for (let c = 0; c < 4; c++) {
      if ((r === 0 && c === 0) || (r === 3 && c === 3)) continue;
      for (const [name, dr, dc] of MOVES) {
        const nr = r + dr;
        const nc = c + dc;
        const inside = nr >= 0 && nr < 4 && nc >= 0 && nc < 4;
        b.addChoice(id(r, c), name, -1, [{ target: inside ? id(nr, nc) : id(r, c), probability: 1, reward: -1 }]);
      }
    }
  }
  return b.finish([{ state: b.indexOf(cell(1, 1))!, probability: 1 }]);
}

/**
 * Sutton and Barto (2018), Example 3.5: the 5x5 gridworld. From A (row 0, column 1) every action
 * moves to A' (row 4, column 1) with reward +10; from B (row 0, column 3) to B' (row 2,
 * column 3) with +5; a move off the grid leaves the state unchanged with reward -1; every other
 * move earns 0. Continuing task, discount 0.9.
 */
export function example35(): CompiledModel {
  const b = new ModelBuilder({ discount: 0.9, maximize: true });
  for (let r = 0; r < 5; r++) for (let c = 0; c < 5; c++) b.addState(cell(r, c), undefined, NOWHERE);
  const at = (r: number, c: number): number => b.indexOf(cell(r, c))!;
  for (let r = 0; r < 5; r++) {
    for (let c = 0; c < 5; c++) {
      for (const [name, dr, dc] of MOVES) {
        let target: number;
        let reward: number;
        if (r === 0 && c === 1) [target, reward] = [at(4, 1), 10];
        else if (r === 0 && c === 3) [target, reward] = [at(2, 3), 5];
        else {
          const nr = r + dr;
          const nc = c + dc;
          const inside = nr >= 0 && nr < 5 && nc >= 0 && nc < 5;
          [target, reward] = inside ? [at(nr, nc), 0] : [at(r, c), -1];
        }
        b.addChoice(at(r, c), name, -1, [{ target, probability: 1, reward }]);
      }
    }
  }
  return b.finish([{ state: at(2, 2), probability: 1 }]);
}

/** One outcome of a hand-built choice: target state id, probability, reward. */
export type Outcome = [string, number, number];

export interface HandModel {
  discount: number;
  maximize?: boolean;
  horizon?: number;
  start: string;
  /** State ids; terminals carry their kind. */
  states: Array<string | [string, TerminalKind]>;
  /** [from, action, outcomes] */
  choices: Array<[string, string, Outcome[]]>;
}

/** Builds a small model from a compact description (for hand-checked cases). */
export function handModel(spec: HandModel): CompiledModel {
  const b = new ModelBuilder({ discount: spec.discount, maximize: spec.maximize ?? true, horizon: spec.horizon });
  for (const s of spec.states) {
    if (typeof s === 'string') b.addState(s, undefined, NOWHERE);
    else b.addState(s[0], s[1], NOWHERE);
  }
  spec.choices.forEach(([from, action, outcomes], i) => {
    b.addChoice(
      b.indexOf(from)!,
      action,
      i,
      outcomes.map(([to, probability, reward]) => ({ target: b.indexOf(to)!, probability, reward })),
    );
  });
  return b.finish([{ state: b.indexOf(spec.start)!, probability: 1 }]);
}

/** A seeded pseudo-random generator (mulberry32, common practice) for reproducible random models. */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * A random MDP of our own: `states` states (the last `terminals` of them terminal goals), each
 * non-terminal with `actions` choices of up to `outcomes` distinct targets, rewards in [-1, 1].
 */
export function randomModel(
  seed: number,
  states: number,
  actions: number,
  outcomes: number,
  discount: number,
  terminals = 0,
  maximize = true,
): CompiledModel {
  const random = seededRandom(seed);
  const b = new ModelBuilder({ discount, maximize });
  for (let s = 0; s < states; s++) b.addState(`s${s}`, s >= states - terminals ? 'goal' : undefined, NOWHERE);
  for (let s = 0; s < states - terminals; s++) {
    for (let a = 0; a < actions; a++) {
      const targets = new Set<number>();
      const count = 1 + Math.floor(random() * outcomes);
      while (targets.size < count) targets.add(Math.floor(random() * states));
      const weights = [...targets].map(() => 0.05 + random());
      const total = weights.reduce((x, y) => x + y, 0);
      b.addChoice(
        s,
        `a${a}`,
        -1,
        [...targets].map((target, i) => ({
          target,
          probability: weights[i] / total,
          reward: Math.round((random() * 2 - 1) * 100) / 100,
        })),
      );
    }
  }
  return b.finish([{ state: 0, probability: 1 }]);
}
