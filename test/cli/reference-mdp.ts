/**
 * An independent reading of the simple example specs, for reference values: the spec text is read
 * with jsonc-parser directly (not Episcope's loader), and policies are evaluated by solving the
 * linear system (I - discount P) v = r with mathjs.
 *
 * Covers the subset the examples use: `to` as id, map or outcome list; numeric or per-term rewards;
 * per-state action lists; single start state. Terminals have value 0.
 */
import { readFileSync } from 'node:fs';
import { parse } from 'jsonc-parser';
import { lusolve, matrix, type Matrix } from 'mathjs';

interface Outcome {
  to: string;
  probability: number;
  reward: number;
}

export interface ReferenceMdp {
  discount: number;
  start: string;
  maximize: boolean;
  /** Non-terminal states, in declaration order. */
  states: string[];
  /** outcomes[state][action] */
  outcomes: Record<string, Record<string, Outcome[]>>;
}

function rewardOf(value: unknown): number {
  if (value === undefined) return 0;
  if (typeof value === 'number') return value;
  return Object.values(value as Record<string, number>).reduce((a, b) => a + b, 0);
}

export function readReferenceMdp(file: string): ReferenceMdp {
  const spec = parse(readFileSync(file, 'utf8'), [], { allowTrailingComma: true });
  const states = Object.entries(spec.states as Record<string, { terminal?: string }>)
    .filter(([, s]) => !s.terminal)
    .map(([id]) => id);
  const outcomes: ReferenceMdp['outcomes'] = {};
  for (const s of states) outcomes[s] = {};
  for (const t of spec.transitions as Array<Record<string, any>>) {
    let list: Outcome[];
    if (typeof t.to === 'string') list = [{ to: t.to, probability: 1, reward: rewardOf(t.reward) }];
    else if (Array.isArray(t.to)) {
      list = t.to.map((o: any) => ({
        to: o.state,
        probability: o.probability,
        reward: rewardOf(o.reward ?? t.reward),
      }));
    } else {
      list = Object.entries(t.to as Record<string, number>).map(([to, p]) => ({
        to,
        probability: p,
        reward: rewardOf(t.reward),
      }));
    }
    outcomes[t.from][t.action] = list;
  }
  return {
    discount: spec.discount,
    start: spec.start,
    maximize: (spec.objective ?? 'maximize') === 'maximize',
    states,
    outcomes,
  };
}

/**
 * The value of every non-terminal state under a stationary policy giving each state a
 * distribution over its actions. Solves (I - discount P) v = r; undefined when singular (the
 * policy never ends the episode at discount 1).
 */
export function evaluatePolicy(
  mdp: ReferenceMdp,
  policy: Record<string, Record<string, number>>,
): Record<string, number> | undefined {
  const n = mdp.states.length;
  const index = new Map(mdp.states.map((s, i) => [s, i]));
  const a: number[][] = mdp.states.map((_, i) => mdp.states.map((__, j) => (i === j ? 1 : 0)));
  const r: number[] = new Array(n).fill(0);
  mdp.states.forEach((s, i) => {
    for (const [action, weight] of Object.entries(policy[s])) {
      for (const o of mdp.outcomes[s][action]) {
        r[i] += weight * o.probability * o.reward;
        const j = index.get(o.to);
        if (j !== undefined) a[i][j] -= mdp.discount * weight * o.probability;
      }
    }
  });
  try {
    const solution = lusolve(matrix(a), matrix(r.map((x) => [x]))) as Matrix;
    const values = (solution.toArray() as number[][]).map((row) => row[0]);
    if (values.some((v) => !Number.isFinite(v))) return undefined;
    return Object.fromEntries(mdp.states.map((s, i) => [s, values[i]]));
  } catch {
    return undefined;
  }
}

/** The uniformly random policy. */
export function randomPolicy(mdp: ReferenceMdp): Record<string, Record<string, number>> {
  return Object.fromEntries(
    mdp.states.map((s) => {
      const actions = Object.keys(mdp.outcomes[s]);
      return [s, Object.fromEntries(actions.map((a) => [a, 1 / actions.length]))];
    }),
  );
}

/** Every deterministic stationary policy (the examples are small enough to list them all). */
export function* deterministicPolicies(mdp: ReferenceMdp): Generator<Record<string, Record<string, number>>> {
  const choices = mdp.states.map((s) => Object.keys(mdp.outcomes[s]));
  const pick = new Array(choices.length).fill(0);
  for (;;) {
    yield Object.fromEntries(mdp.states.map((s, i) => [s, { [choices[i][pick[i]]]: 1 }]));
    let i = 0;
    while (i < pick.length && ++pick[i] === choices[i].length) pick[i++] = 0;
    if (i === pick.length) return;
  }
}
