/**
 * Spec generators of our own for the `solver` benchmark section and for tests: slippery grid
 * worlds, gambler's-ruin random walks (with their closed forms) and a seeded random TypeScript
 * model. Every generated spec is a plain JSON-able object (or TypeScript source text) in spec format
 * version 1; the numbers (step cost, slip, pit places) are invented for the benchmark.
 */

/** A JSON spec as an object: what `JSON.stringify` writes to a `*.mdp.json` file. */
export type GeneratedSpec = Record<string, unknown>;

interface OutcomeEntry {
  state: string;
  probability: number;
  reward: number;
}

/** Grid moves as (row, column) steps; each move slips to the two moves at right angles. */
const GRID_MOVES: ReadonlyArray<[name: string, dRow: number, dColumn: number]> = [
  ['north', -1, 0],
  ['south', 1, 0],
  ['east', 0, 1],
  ['west', 0, -1],
];

export const gridCell = (row: number, column: number): string => `r${row}c${column}`;

export interface GridOptions {
  /** Cells per side. */
  size: number;
  discount: number;
  /** Probability of the intended move; the rest is split evenly between the two sideways moves. Default 0.8. */
  intended?: number;
}

/**
 * The pits of a grid: a few failure cells away from the start (top left) and the goal (bottom
 * right), spread over the grid so that no pit walls off a region. Invented positions.
 */
export function gridPits(size: number): Array<[row: number, column: number]> {
  if (size < 5) return [];
  const at = (fraction: number) => Math.min(size - 2, Math.max(1, Math.round(fraction * (size - 1))));
  const pits: Array<[number, number]> = [
    [at(0.5), at(0.5)],
    [at(0.25), at(0.75)],
    [at(0.75), at(0.25)],
    [at(0.3), at(0.3)],
    [at(0.7), at(0.8)],
  ];
  // Small grids round several fractions to the same cell: keep each cell once.
  return pits.filter(([r, c], i) => pits.findIndex(([r2, c2]) => r2 === r && c2 === c) === i);
}

/**
 * A slippery grid world: the agent starts in the top-left cell; the bottom-right cell is the goal,
 * a few cells are pits (failure). Each of north, south, east and west moves as intended with
 * probability 0.8 and to each side at right angles with 0.1; a move into a wall leaves the agent
 * where it is. Every step costs 1 (reward -1), entering a pit or the goal included.
 */
export function slipperyGridSpec(options: GridOptions): GeneratedSpec {
  const { size, discount } = options;
  if (!(Number.isInteger(size) && size >= 2)) throw new Error(`a grid needs at least 2 cells per side, not ${size}`);
  const intended = options.intended ?? 0.8;
  const side = (1 - intended) / 2;
  const goal = gridCell(size - 1, size - 1);
  const pits = new Set(gridPits(size).map(([r, c]) => gridCell(r, c)));
  const states: Record<string, unknown> = {};
  for (let r = 0; r < size; r++) {
    for (let c = 0; c < size; c++) {
      const id = gridCell(r, c);
      states[id] = id === goal ? { terminal: 'goal' } : pits.has(id) ? { terminal: 'failure' } : {};
    }
  }
  const inside = (r: number, c: number) => r >= 0 && r < size && c >= 0 && c < size;
  const transitions: unknown[] = [];
  for (let r = 0; r < size; r++) {
    for (let c = 0; c < size; c++) {
      const from = gridCell(r, c);
      if (from === goal || pits.has(from)) continue;
      for (const [action, dr, dc] of GRID_MOVES) {
        // Intended move, then the two moves at right angles: (dc, dr) and (-dc, -dr).
        const moves: Array<[number, number, number]> = [
          [dr, dc, intended],
          [dc, dr, side],
          [-dc, -dr, side],
        ];
        const to = new Map<string, number>();
        for (const [mr, mc, p] of moves) {
          const target = inside(r + mr, c + mc) ? gridCell(r + mr, c + mc) : from;
          to.set(target, (to.get(target) ?? 0) + p);
        }
        transitions.push({ from, action, to: outcomeList(to, () => -1) });
      }
    }
  }
  return {
    name: `slippery-grid-${size}x${size}`,
    discount,
    start: gridCell(0, 0),
    actions: GRID_MOVES.map(([name]) => name),
    states,
    transitions,
  };
}

function outcomeList(to: ReadonlyMap<string, number>, reward: (state: string) => number): OutcomeEntry[] {
  return [...to].map(([state, probability]) => ({ state, probability, reward: reward(state) }));
}

export const walkState = (position: number): string => `at${position}`;

export interface WalkOptions {
  /** The walk runs on 0..n: 0 is the failure, n the goal. */
  n: number;
  /** Probability of a step up (toward n); 0.5 is the fair walk. */
  up: number;
  /** Start position; default the middle, floor(n / 2). */
  start?: number;
  /** Default 1. */
  discount?: number;
}

/**
 * Gambler's ruin as a spec: positions 0..n, one action "step" that moves up with probability `up`
 * and down otherwise; 0 is a failure terminal and n a goal terminal. Reaching n pays 1 and nothing
 * else pays, so at discount 1 the start's value is the probability of reaching n.
 */
export function randomWalkSpec(options: WalkOptions): GeneratedSpec {
  const { n, up } = options;
  if (!(Number.isInteger(n) && n >= 2)) throw new Error(`a walk needs n >= 2, not ${n}`);
  if (!(up > 0 && up < 1)) throw new Error(`the probability of a step up must be strictly between 0 and 1, not ${up}`);
  const start = options.start ?? Math.floor(n / 2);
  const states: Record<string, unknown> = {};
  for (let i = 0; i <= n; i++)
    states[walkState(i)] = i === 0 ? { terminal: 'failure' } : i === n ? { terminal: 'goal' } : {};
  const transitions: unknown[] = [];
  for (let i = 1; i < n; i++) {
    transitions.push({
      from: walkState(i),
      action: 'step',
      to: [
        { state: walkState(i + 1), probability: up, reward: i + 1 === n ? 1 : 0 },
        { state: walkState(i - 1), probability: 1 - up, reward: 0 },
      ],
    });
  }
  return {
    name: `random-walk-${n}-up-${up}`,
    discount: options.discount ?? 1,
    start: walkState(start),
    actions: ['step'],
    states,
    transitions,
  };
}

export interface WalkTruth {
  /** Probability of reaching n before 0. */
  goal: number;
  /** Probability of reaching 0 before n. */
  failure: number;
  /** Expected number of steps until 0 or n. */
  duration: number;
}

/**
 * Gambler's ruin in closed form (W. Feller, An Introduction to Probability Theory and Its
 * Applications, vol. 1, 3rd ed., Wiley 1968, ch. XIV, sections 2 and 3), from position i of 0..n
 * with probability p of a step up and q = 1 - p: fair (p = q) P(reach n) = i/n, duration i(n - i);
 * else with r = q/p, P(reach n) = (1 - r^i)/(1 - r^n) and duration i/(q - p) - (n/(q - p)) P(reach n).
 * Powers are taken so that neither overflows for n in the tens of thousands.
 */
export function walkTruth(n: number, p: number, i: number): WalkTruth {
  const q = 1 - p;
  if (p === q) return { goal: i / n, failure: 1 - i / n, duration: i * (n - i) };
  const r = q / p;
  // (1 - r^i)/(1 - r^n) = r^(i-n) (1 - r^-i)/(1 - r^-n) when r > 1, so no power above 1 is formed.
  const ln = Math.log(r);
  const goal =
    r < 1
      ? Math.expm1(i * ln) / Math.expm1(n * ln)
      : Math.exp((i - n) * ln) * (Math.expm1(-i * ln) / Math.expm1(-n * ln));
  return { goal, failure: 1 - goal, duration: i / (q - p) - (n / (q - p)) * goal };
}

export interface RandomModelOptions {
  states: number;
  actions: number;
  outcomes: number;
  seed: number;
  discount: number;
}

/**
 * A seeded random enumerable TypeScript model: states are the numbers 0..states-1, start 0;
 * each state offers `actions` actions with `outcomes` outcomes each, to targets drawn uniformly,
 * probabilities proportional to 0.05 + u and rewards u (u uniform in [0, 1)). About one state in a
 * hundred is a goal and one in a hundred a failure, so episodes end (after about 50 steps at random).
 * The draws are a hash of (seed, state, action, outcome), so `outcomes` is a pure function.
 */
export function randomTypeScriptSpec(options: RandomModelOptions): string {
  const { states, actions, outcomes, seed, discount } = options;
  return `import { defineMdp } from 'episcope';

// A random model of our own for the benchmark (seed ${seed}); every number is drawn, none means anything.
const STATES = ${states};
const OUTCOMES = ${outcomes};
const ACTIONS = ${JSON.stringify(Array.from({ length: actions }, (_, a) => `a${a}`))};

/** A 32-bit integer hash (mulberry32's finaliser) of three numbers, as a float in [0, 1). */
function draw(state: number, action: number, slot: number): number {
  let t = (Math.imul(state, 0x9e3779b1) ^ Math.imul(action + 1, 0x85ebca77) ^ Math.imul(slot + 1, 0xc2b2ae3d) ^ ${seed | 0}) >>> 0;
  t = (t + 0x6d2b79f5) >>> 0;
  t = Math.imul(t ^ (t >>> 15), t | 1);
  t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
  return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
}

export default defineMdp({
  name: 'random-model-bench',
  discount: ${discount},
  start: 0,
  actions: () => ACTIONS,
  terminal: (s: number) => (s % 100 === 99 ? 'goal' : s % 100 === 98 ? 'failure' : undefined),
  outcomes(s: number, action: string) {
    const a = ACTIONS.indexOf(action);
    const list: Array<{ state: number; probability: number; reward: number }> = [];
    let total = 0;
    for (let k = 0; k < OUTCOMES; k++) {
      const weight = 0.05 + draw(s, a, 3 * k);
      total += weight;
      list.push({ state: Math.floor(draw(s, a, 3 * k + 1) * STATES), probability: weight, reward: draw(s, a, 3 * k + 2) });
    }
    for (const o of list) o.probability /= total;
    return list;
  },
});
`;
}

/**
 * Hostile inputs for the loader's bounds: a spec whose `count` transitions each have a wrong-typed
 * `from` (a number), and a valid two-state spec padded with `blanks` spaces. Invented content.
 */
export function wrongTypedTransitionsText(count: number): string {
  const transitions = Array.from({ length: count }, (_, i) => ({ from: i, action: 'go', to: 'g', reward: 1 }));
  return JSON.stringify({
    discount: 0.9,
    start: 'a',
    actions: ['go'],
    states: { a: {}, g: { terminal: 'goal' } },
    transitions,
  });
}

export function blankPaddedSpecText(blanks: number): string {
  const spec = {
    discount: 0.9,
    start: 'a',
    actions: ['go'],
    states: { a: {}, g: { terminal: 'goal' } },
    transitions: [{ from: 'a', action: 'go', to: 'g', reward: 1 }],
  };
  return JSON.stringify(spec).replace('"transitions"', `${' '.repeat(blanks)}"transitions"`);
}
