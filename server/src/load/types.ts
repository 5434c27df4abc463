/**
 * The parsed form of a spec, common to JSON and TypeScript sources. Every value keeps the span of
 * the text it came from, so that each finding can point at the exact key or value.
 */

export type { Span } from './span';
import type { Span } from './span';

export type TerminalKind = 'goal' | 'failure' | 'neutral';
export const TERMINAL_KINDS: readonly TerminalKind[] = ['goal', 'failure', 'neutral'];
export type Objective = 'maximize' | 'minimize';
export type TermDirection = 'bonus' | 'penalty' | 'either';

export interface Located<T> {
  value: T;
  span: Span;
}

/** One component of an outcome's reward; `term` is null for a plain numeric reward. */
export interface RewardPart {
  term: string | null;
  value: number;
  span: Span;
}

export interface SpecOutcome {
  state: string;
  stateSpan: Span;
  probability: number;
  probabilitySpan: Span;
  reward: RewardPart[];
  /** The whole outcome (for a bare state id, the id itself). */
  span: Span;
}

/**
 * One (from, action) pair of the spec. A transition whose `from` or `action` is an array is
 * expanded into one entry per combination; `sourceIndex` is then shared by the entries.
 */
export interface SpecTransition {
  sourceIndex: number;
  from: string;
  fromSpan: Span;
  action: string;
  actionSpan: Span;
  outcomes: SpecOutcome[];
  toSpan: Span;
  /** The whole transition object. */
  span: Span;
  /**
   * True when part of the transition could not be read (a `schema` finding says why): its
   * outcomes may be missing, so outcome rules skip it and the compiler refuses the spec.
   */
  incomplete?: boolean;
}

export interface UnreadTransition {
  from?: string[];
  action?: string[];
  span: Span;
}

export interface SpecState {
  id: string;
  /** The state's key in `states`. */
  span: Span;
  terminal?: TerminalKind;
  terminalSpan?: Span;
  /**
   * The state has a `terminal` field that is not a terminal kind (a `schema` finding says why): it
   * was meant to be terminal, so missing-outcomes leaves it alone.
   */
  terminalUnread?: boolean;
  /** The state's own action set, when it narrows the default one. */
  actions?: Located<string>[];
  actionsSpan?: Span;
  /** A readable rendering of the state (for generated states of TypeScript models). */
  label?: string;
}

export interface RewardTermSpec {
  name: string;
  direction: TermDirection;
  shaping: boolean;
  span: Span;
}

export interface StartEntry {
  state: string;
  probability: number;
  /** Where the state is named. */
  span: Span;
  /** Where the probability is written, when it is written (the map form of `start`). */
  probabilitySpan?: Span;
}

export interface PotentialEntry {
  state: string;
  value: number;
  /** Where the state is named. */
  span: Span;
  /** Where the value is written. */
  valueSpan?: Span;
}

export interface ParsedSpec {
  format: 'json' | 'ts';
  /** The span of the whole document's root value (fallback location for findings). */
  rootSpan: Span;
  name?: Located<string>;
  objective: Objective;
  objectiveSpan?: Span;
  discount?: Located<number>;
  horizon?: Located<number>;
  start: StartEntry[];
  startSpan?: Span;
  /** The default action set of every state. */
  actions: Located<string>[];
  actionsSpan?: Span;
  rewardTerms: RewardTermSpec[];
  rewardTermsSpan?: Span;
  states: SpecState[];
  statesSpan?: Span;
  potential: PotentialEntry[];
  shapingSpan?: Span;
  transitions: SpecTransition[];
  transitionsSpan?: Span;
  /**
   * Transitions whose `from` or `action` could not be read (a `schema` finding says why), with the
   * states and actions they seem to be about; undefined where nothing tells. missing-outcomes does
   * not repeat the schema finding for these pairs.
   */
  unreadTransitions?: UnreadTransition[];
  /** For `*.mdp.ts` specs: member positions, randomness sites and what running the model found. */
  typescript?: import('./typescript-evidence').TypeScriptEvidence;
}

export function emptySpec(format: 'json' | 'ts', rootSpan: Span): ParsedSpec {
  return {
    format,
    rootSpan,
    objective: 'maximize',
    start: [],
    actions: [],
    rewardTerms: [],
    states: [],
    potential: [],
    transitions: [],
  };
}
