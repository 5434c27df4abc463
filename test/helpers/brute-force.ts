/**
 * Brute-force reference values for small finite-horizon specs, independent of Episcope's solver:
 * every deterministic policy is enumerated and evaluated in exact rational arithmetic (mathjs
 * fractions). Reads only the simple spec form the tests write: `to` as a state id or a map of
 * probabilities, numeric rewards, a global or per-state `actions` list, one start state.
 */
import { add, fraction, multiply, type Fraction } from 'mathjs';

export interface SimpleSpec {
  discount: number;
  horizon: number;
  start: string;
  objective?: 'maximize' | 'minimize';
  actions: string[];
  states: Record<string, { terminal?: string; actions?: string[] }>;
  transitions: Array<{ from: string; action: string; to: string | Record<string, number>; reward: number }>;
}

interface Choice {
  action: string;
  outcomes: Array<{ to: string; probability: Fraction; reward: Fraction }>;
}

function choicesOf(spec: SimpleSpec): Map<string, Choice[]> {
  const out = new Map<string, Choice[]>();
  for (const [id, state] of Object.entries(spec.states)) {
    if (state.terminal) continue;
    const choices: Choice[] = [];
    for (const action of state.actions ?? spec.actions) {
      const t = spec.transitions.find((x) => x.from === id && x.action === action);
      if (!t) continue;
      const targets = typeof t.to === 'string' ? { [t.to]: 1 } : t.to;
      choices.push({
        action,
        outcomes: Object.entries(targets).map(([to, p]) => ({
          to,
          probability: fraction(p),
          reward: fraction(t.reward),
        })),
      });
    }
    out.set(id, choices);
  }
  return out;
}

/** The return from the start of a policy that picks a choice index per (steps left, state). */
function evaluate(
  spec: SimpleSpec,
  choices: Map<string, Choice[]>,
  pick: (k: number, state: string) => number,
): Fraction {
  const gamma = fraction(spec.discount);
  const memo = new Map<string, Fraction>();
  const value = (k: number, state: string): Fraction => {
    const options = choices.get(state);
    if (k === 0 || !options || options.length === 0) return fraction(0);
    const key = `${k} ${state}`;
    const known = memo.get(key);
    if (known) return known;
    let total = fraction(0);
    for (const o of options[pick(k, state)].outcomes) {
      total = add(total, multiply(o.probability, add(o.reward, multiply(gamma, value(k - 1, o.to))))) as Fraction;
    }
    memo.set(key, total);
    return total;
  };
  return value(spec.horizon, spec.start);
}

/** The best of the returns over every assignment of a choice to each slot (odometer enumeration). */
function bestOver(spec: SimpleSpec, slots: Array<{ size: number }>, run: (assignment: number[]) => Fraction): Fraction {
  const sign = spec.objective === 'minimize' ? -1 : 1;
  const assignment = slots.map(() => 0);
  let best: Fraction | undefined;
  for (;;) {
    const value = run(assignment);
    if (!best || sign * (value.valueOf() as number) > sign * (best.valueOf() as number)) best = value;
    let i = 0;
    for (; i < slots.length; i++) {
      if (++assignment[i] < slots[i].size) break;
      assignment[i] = 0;
    }
    if (i === slots.length) return best;
  }
}

/** The optimal return over deterministic Markov (time-dependent) policies, by enumeration. */
export function bestTimeDependentReturn(spec: SimpleSpec): Fraction {
  const choices = choicesOf(spec);
  const states = [...choices.keys()];
  const slots: Array<{ k: number; state: string; size: number }> = [];
  for (let k = 1; k <= spec.horizon; k++)
    for (const state of states) slots.push({ k, state, size: choices.get(state)!.length });
  const index = new Map(slots.map((slot, i) => [`${slot.k} ${slot.state}`, i]));
  return bestOver(spec, slots, (a) => evaluate(spec, choices, (k, state) => a[index.get(`${k} ${state}`)!]));
}

/** The best return over deterministic stationary (time-blind) policies, by enumeration. */
export function bestStationaryReturn(spec: SimpleSpec): Fraction {
  const choices = choicesOf(spec);
  const states = [...choices.keys()];
  const slots = states.map((state) => ({ size: choices.get(state)!.length }));
  return bestOver(spec, slots, (a) => evaluate(spec, choices, (_k, state) => a[states.indexOf(state)]));
}
