/**
 * The authoring API of TypeScript specs (`*.mdp.ts`): `export default defineMdp({...})`.
 * This file is self-contained (no imports) because its declarations are emitted as the package's
 * types entry (`dist/types/define.d.ts`). Episcope never needs `defineMdp` to resolve: the static
 * reader looks at the object literal, and the sandbox supplies an identity function of its own.
 */

/** How an episode ends when it enters a terminal state. */
export type TerminalKind = 'goal' | 'failure' | 'neutral';

/** Plain JSON data; states of enumerable models must be made of these. */
export type JsonValue = string | number | boolean | null | JsonValue[] | { [key: string]: JsonValue };

/** An action is named by a string or a number. */
export type ActionName = string | number;

/** A reward: a number, or named parts (reward terms) whose sum is the reward. */
export type Reward<Term extends string = string> = number | { [K in Term]?: number };

/** Declares one reward term, as in JSON specs. */
export interface RewardTermDeclaration {
  /** "bonus" terms must be >= 0, "penalty" terms <= 0, "either" may take both signs. */
  direction: 'bonus' | 'penalty' | 'either';
  /** Marks a shaping term: it must be potential-based (discount * Phi(s') - Phi(s)). */
  shaping?: boolean;
}

/**
 * The random source handed to sampled models. Calling it returns a float in [0, 1). It is seeded
 * per episode by Episcope, so runs are reproducible; use it instead of Math.random.
 */
export interface Rng {
  (): number;
  /** A whole number in [0, n). */
  int(n: number): number;
  /** One element, uniformly. */
  pick<T>(items: readonly T[]): T;
  /** True with probability p. */
  chance(p: number): boolean;
  /** A normal variate (Box-Muller transform). */
  normal(mean?: number, standardDeviation?: number): number;
}

/** One outcome of taking an action in a state (enumerable models). */
export interface Outcome<State, Term extends string = string> {
  state: State;
  probability: number;
  reward: Reward<Term>;
}

/** What one sampled transition returns (sampled models). */
export interface SampledTransition<State, Term extends string = string> {
  state: State;
  reward: Reward<Term>;
  /** Set when the new state ends the episode. */
  terminal?: TerminalKind;
}

interface CommonFields<State, Action extends ActionName, Term extends string> {
  name?: string;
  /** "maximize" (rewards) or "minimize" (costs); default "maximize". */
  objective?: 'maximize' | 'minimize';
  /** 0 <= discount <= 1. */
  discount: number;
  /** Time limit: the episode is cut after this many steps. */
  horizon?: number;
  rewardTerms?: { [K in Term]: RewardTermDeclaration };
  /** The actions available in a (non-terminal) state. */
  actions(state: State): readonly Action[];
  /** The terminal kind of a state, or undefined when the episode goes on. */
  terminal?(state: State): TerminalKind | undefined;
}

/**
 * A model that lists its outcomes with probabilities. Episcope enumerates every state reachable
 * from the start and analyses the finite MDP exactly. States must be plain JSON values.
 */
export interface EnumerableMdp<
  State,
  Action extends ActionName = ActionName,
  Term extends string = string,
> extends CommonFields<State, Action, Term> {
  /** The start state (or give `startDistribution`). */
  start?: State;
  /** Several start states with their probabilities (adding up to 1). */
  startDistribution?: ReadonlyArray<{ state: State; probability: number }>;
  outcomes(state: State, action: Action): ReadonlyArray<Outcome<State, Term>>;
}

/**
 * A black-box model that can only sample transitions. Episcope runs seeded rollouts under the
 * uniformly random policy and reports estimates with confidence intervals.
 */
export interface SampledMdp<
  State,
  Action extends ActionName = ActionName,
  Term extends string = string,
> extends CommonFields<State, Action, Term> {
  /** The start state, or a function drawing one. */
  start: State | ((rng: Rng) => State);
  sample(state: State, action: Action, rng: Rng): SampledTransition<State, Term>;
  /**
   * Optional: the key that groups states for the model Episcope builds from the samples (a string
   * or a finite number), e.g. continuous positions rounded to a grid cell. States with equal keys
   * count as one state. Without it, a state's key is its JSON with sorted object keys.
   */
  stateKey?(state: State): string | number;
}

export type MdpDefinition<State = unknown, Action extends ActionName = ActionName, Term extends string = string> =
  EnumerableMdp<State, Action, Term> | SampledMdp<State, Action, Term>;

/** The identity function; it only gives the definition its types. */
export function defineMdp<State, Action extends ActionName = ActionName, Term extends string = string>(
  definition: MdpDefinition<State, Action, Term>,
): MdpDefinition<State, Action, Term> {
  return definition;
}
