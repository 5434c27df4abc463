/**
 * Gambler's ruin on 0..N as a one-action MDP, with its closed forms: a step up with probability
 * p, down with q = 1 - p; from i the walk ends at N with probability i/N (p = 1/2) or
 * (1 - r^i)/(1 - r^N), r = q/p, and its expected duration is i(N - i) (p = 1/2) or
 * i/(q - p) - N/(q - p) (1 - r^i)/(1 - r^N) (W. Feller, An Introduction to Probability Theory and
 * Its Applications, vol. 1, 3rd ed., 1968, ch. XIV, sections 2 and 3).
 */
import { ModelBuilder, type CompiledModel } from '../../server/src/model/compiled';

const SPAN = { start: 0, end: 0 };

/** The walk at discount 1, started at `startAt`; reaching N pays `prize`, so V(i) is prize times the goal probability. */
export function gamblersRuinWalk(n: number, p: number, startAt: number, prize = 1): CompiledModel {
  const builder = new ModelBuilder({ discount: 1, maximize: true });
  for (let i = 0; i <= n; i++) builder.addState(`s${i}`, i === 0 ? 'failure' : i === n ? 'goal' : undefined, SPAN);
  for (let i = 1; i < n; i++) {
    builder.addChoice(i, 'step', -1, [
      { target: i + 1, probability: p, reward: i + 1 === n ? prize : 0 },
      { target: i - 1, probability: 1 - p, reward: 0 },
    ]);
  }
  return builder.finish([{ state: startAt, probability: 1 }]);
}

/** Feller's goal probability and expected duration from i. */
export function ruin(n: number, p: number, i: number): { goal: number; duration: number } {
  if (p === 0.5) return { goal: i / n, duration: i * (n - i) };
  const q = 1 - p;
  const r = q / p;
  const goal = (1 - r ** i) / (1 - r ** n);
  return { goal, duration: i / (q - p) - (n / (q - p)) * goal };
}
