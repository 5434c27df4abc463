import type { Span, TerminalKind } from '../load/types';
import type { SampleEvidence } from './empirical';

/** Terminal codes in `CompiledModel.terminal`. */
export const NOT_TERMINAL = 0;
export const TERMINAL_CODE: Record<TerminalKind, number> = { goal: 1, failure: 2, neutral: 3 };
export const TERMINAL_OF_CODE: ReadonlyArray<TerminalKind | undefined> = [undefined, 'goal', 'failure', 'neutral'];

/**
 * A finite MDP in compressed sparse row form. A "choice" is one (state, action) pair; the choices
 * of state s are choiceStart[s] .. choiceStart[s+1]-1, and the outcomes of choice c are
 * outcomeStart[c] .. outcomeStart[c+1]-1. Terminal states have no choices. Every non-terminal state
 * has at least one choice and every choice's probabilities add up to 1 (the compiler guarantees it).
 */
export interface CompiledModel {
  stateCount: number;
  choiceCount: number;
  outcomeCount: number;
  /** State ids (JSON keys, or canonical keys of generated states). */
  stateIds: string[];
  stateIndex: Map<string, number>;
  /** Readable renderings for generated states; undefined where the id is readable itself. */
  stateLabels?: (string | undefined)[];
  /** 0 = not terminal, else TERMINAL_CODE of the kind. */
  terminal: Uint8Array;
  actionNames: string[];

  choiceStart: Int32Array;
  choiceAction: Int32Array;
  /** Index into ParsedSpec.transitions of the transition that defined the choice, or -1. */
  choiceTransition: Int32Array;

  outcomeStart: Int32Array;
  outcomeTarget: Int32Array;
  outcomeProb: Float64Array;
  /** The scalar reward of the outcome, shaping included. */
  outcomeReward: Float64Array;

  /** Named reward terms; the untyped remainder is outcomeReward minus every term and shaping. */
  termNames: string[];
  /** Per term, the term's part of each outcome's reward. */
  outcomeTermReward: Float64Array[];
  /** The potential-based shaping reward discount*Phi(s') - Phi(s) of each outcome, when the spec has `shaping.potential`. */
  outcomePotentialReward?: Float64Array;
  /** Phi per state, when the spec has `shaping.potential`. */
  potential?: Float64Array;

  startState: Int32Array;
  startProb: Float64Array;

  discount: number;
  horizon?: number;
  maximize: boolean;

  /** Where each state is written (declaration key, or the function that generated it). */
  stateSpan: Span[];
  /** Set on a model built from samples (model/empirical.ts): the counts behind each probability. */
  samples?: SampleEvidence;
}

/** A state's readable name: its label when generated, else its id. */
export function stateName(model: CompiledModel, state: number): string {
  return model.stateLabels?.[state] ?? model.stateIds[state];
}

/** Outcome and choice indices are Int32: a model holds at most this many of either. */
const MAX_ENTRIES = 0x7fffffff;

export type NumberColumn = Int32Array | Float64Array | Uint8Array;

/**
 * The same column with room for at least `needed` entries: the buffer doubles (so that n appends
 * copy O(n) entries in all) and keeps the filled part.
 */
export function withRoom<T extends NumberColumn>(column: T, needed: number): T {
  if (needed <= column.length) return column;
  if (needed > MAX_ENTRIES)
    throw new Error(`the model has more than ${MAX_ENTRIES} outcomes or choices, more than the analysis can index`);
  let size = Math.max(64, column.length * 2);
  while (size < needed) size *= 2;
  const bigger = new (column.constructor as new (length: number) => T)(Math.min(size, MAX_ENTRIES));
  bigger.set(column);
  return bigger;
}

/**
 * The first `length` entries of a column for the finished model: a view of the same buffer when
 * little of it is unused, else one exact-size copy, so the model never keeps a mostly empty
 * doubled buffer alive.
 */
function fitted<T extends NumberColumn>(column: T, length: number): T {
  return column.length - length <= column.length / 8
    ? (column.subarray(0, length) as T)
    : (column.slice(0, length) as T);
}

/** How many states, choices and outcomes to make room for up front (an estimate; more still fit). */
export interface BuilderReserve {
  states?: number;
  choices?: number;
  outcomes?: number;
}

/**
 * Incrementally builds a CompiledModel; states must be added before the choices that use them.
 * Choices may come in any state order. Everything numeric is kept in typed arrays that double when
 * full, so a model of tens of millions of outcomes costs about its final size while it is built.
 */
export class ModelBuilder {
  private readonly stateIds: string[] = [];
  private readonly stateIndex = new Map<string, number>();
  /** Created on the first label, so models without labels keep no per-state array of undefined. */
  private stateLabels: (string | undefined)[] | undefined;
  private readonly stateSpans: Span[] = [];
  private terminal: Uint8Array;
  private readonly actionIndex = new Map<string, number>();
  private readonly actionNames: string[] = [];
  private readonly termIndex = new Map<string, number>();
  private readonly termNames: string[] = [];

  // Choices in the order they were added; finish() lays them out in state order.
  private choiceCount = 0;
  private choiceState: Int32Array;
  private choiceAction: Int32Array;
  private choiceTransition: Int32Array;
  /** choiceFirst[c]: the first outcome of choice c; the outcomes of one choice are consecutive. */
  private choiceFirst: Int32Array;
  /** Whether every choice so far belongs to a state at or after the previous choice's state. */
  private choicesInStateOrder = true;

  private outcomeCount = 0;
  private target: Int32Array;
  private prob: Float64Array;
  private reward: Float64Array;
  /** Allocated on the first outcome with a shaping part. */
  private potentialReward: Float64Array | undefined;
  /** Per term, allocated on the term's first use; undefined for terms no outcome has used. */
  private readonly termReward: (Float64Array | undefined)[] = [];
  private finished = false;

  constructor(
    private readonly options: {
      discount: number;
      horizon?: number;
      maximize: boolean;
      terms?: string[];
      reserve?: BuilderReserve;
    },
  ) {
    for (const t of options.terms ?? []) this.term(t);
    const room = (n: number | undefined) => Math.max(0, Math.min(MAX_ENTRIES, Math.floor(n ?? 0)));
    this.terminal = new Uint8Array(room(options.reserve?.states));
    const choices = room(options.reserve?.choices);
    this.choiceState = new Int32Array(choices);
    this.choiceAction = new Int32Array(choices);
    this.choiceTransition = new Int32Array(choices);
    this.choiceFirst = new Int32Array(Math.min(MAX_ENTRIES, choices + 1));
    const outcomes = room(options.reserve?.outcomes);
    this.target = new Int32Array(outcomes);
    this.prob = new Float64Array(outcomes);
    this.reward = new Float64Array(outcomes);
  }

  addState(id: string, terminal: TerminalKind | undefined, span: Span, label?: string): number {
    this.checkOpen();
    const existing = this.stateIndex.get(id);
    if (existing !== undefined) return existing;
    const index = this.stateIds.length;
    this.stateIds.push(id);
    this.stateIndex.set(id, index);
    if (label !== undefined && !this.stateLabels)
      this.stateLabels = new Array<string | undefined>(index).fill(undefined);
    this.stateLabels?.push(label);
    this.stateSpans.push(span);
    this.terminal = withRoom(this.terminal, index + 1);
    this.terminal[index] = terminal ? TERMINAL_CODE[terminal] : NOT_TERMINAL;
    return index;
  }

  hasState(id: string): boolean {
    return this.stateIndex.has(id);
  }

  indexOf(id: string): number | undefined {
    return this.stateIndex.get(id);
  }

  /**
   * Adds a choice with its outcomes. Each outcome's `terms` gives the named-term parts of its
   * reward; `shaping` the potential-based part (already included in `reward`).
   */
  addChoice(
    state: number,
    action: string,
    transition: number,
    outcomes: ReadonlyArray<{
      target: number;
      probability: number;
      reward: number;
      terms?: ReadonlyArray<[string, number]>;
      shaping?: number;
    }>,
  ): void {
    this.checkOpen();
    let actionId = this.actionIndex.get(action);
    if (actionId === undefined) {
      actionId = this.actionNames.length;
      this.actionNames.push(action);
      this.actionIndex.set(action, actionId);
    }
    const c = this.choiceCount;
    if (c >= this.choiceState.length) {
      this.choiceState = withRoom(this.choiceState, c + 1);
      this.choiceAction = withRoom(this.choiceAction, c + 1);
      this.choiceTransition = withRoom(this.choiceTransition, c + 1);
    }
    this.choiceFirst = withRoom(this.choiceFirst, c + 2);
    if (c > 0 && state < this.choiceState[c - 1]) this.choicesInStateOrder = false;
    this.choiceState[c] = state;
    this.choiceAction[c] = actionId;
    this.choiceTransition[c] = transition;
    this.choiceFirst[c] = this.outcomeCount;
    this.choiceCount = c + 1;

    const first = this.outcomeCount;
    this.makeOutcomeRoom(first + outcomes.length);
    for (let i = 0; i < outcomes.length; i++) {
      const o = outcomes[i];
      const k = first + i;
      this.target[k] = o.target;
      this.prob[k] = o.probability;
      this.reward[k] = o.reward;
      if (o.shaping !== undefined) (this.potentialReward ??= new Float64Array(this.target.length))[k] = o.shaping;
      if (o.terms) {
        for (const [name, value] of o.terms) {
          const t = this.term(name);
          (this.termReward[t] ??= new Float64Array(this.target.length))[k] += value;
        }
      }
    }
    this.outcomeCount = first + outcomes.length;
  }

  /**
   * The model. The builder is spent afterwards: the model may share its buffers. When choices came
   * in state order the outcome columns are handed over as they are (trimmed by `fitted`), else they
   * are laid out in state order in one exact-size copy.
   */
  finish(start: ReadonlyArray<{ state: number; probability: number }>, potential?: Float64Array): CompiledModel {
    this.checkOpen();
    this.finished = true;
    const stateCount = this.stateIds.length;
    const choiceCount = this.choiceCount;
    const outcomeCount = this.outcomeCount;
    this.choiceFirst[choiceCount] = outcomeCount;

    const choiceStart = new Int32Array(stateCount + 1);
    for (let c = 0; c < choiceCount; c++) choiceStart[this.choiceState[c] + 1]++;
    for (let s = 0; s < stateCount; s++) choiceStart[s + 1] += choiceStart[s];

    let choiceAction: Int32Array;
    let choiceTransition: Int32Array;
    let outcomeStart: Int32Array;
    let outcomeTarget: Int32Array;
    let outcomeProb: Float64Array;
    let outcomeReward: Float64Array;
    let outcomePotentialReward = this.potentialReward;
    const outcomeTermReward: Float64Array[] = [];
    if (this.choicesInStateOrder) {
      choiceAction = fitted(this.choiceAction, choiceCount);
      choiceTransition = fitted(this.choiceTransition, choiceCount);
      outcomeStart = fitted(this.choiceFirst, choiceCount + 1);
      outcomeTarget = fitted(this.target, outcomeCount);
      outcomeProb = fitted(this.prob, outcomeCount);
      outcomeReward = fitted(this.reward, outcomeCount);
      if (outcomePotentialReward) outcomePotentialReward = fitted(outcomePotentialReward, outcomeCount);
      for (let t = 0; t < this.termNames.length; t++) {
        const column = this.termReward[t];
        outcomeTermReward.push(column ? fitted(column, outcomeCount) : new Float64Array(outcomeCount));
      }
    } else {
      // A stable counting sort of the choices by state, then the outcomes copied in that order.
      const placeOf = new Int32Array(choiceCount);
      const fill = choiceStart.slice(0, stateCount);
      for (let c = 0; c < choiceCount; c++) placeOf[c] = fill[this.choiceState[c]]++;
      choiceAction = new Int32Array(choiceCount);
      choiceTransition = new Int32Array(choiceCount);
      const sizes = new Int32Array(choiceCount + 1);
      for (let c = 0; c < choiceCount; c++) {
        const place = placeOf[c];
        choiceAction[place] = this.choiceAction[c];
        choiceTransition[place] = this.choiceTransition[c];
        sizes[place + 1] = this.choiceFirst[c + 1] - this.choiceFirst[c];
      }
      outcomeStart = sizes;
      for (let c = 0; c < choiceCount; c++) outcomeStart[c + 1] += outcomeStart[c];
      const reorder = <T extends Int32Array | Float64Array>(column: T): T => {
        const out = new (column.constructor as new (length: number) => T)(outcomeCount);
        for (let c = 0; c < choiceCount; c++)
          out.set(column.subarray(this.choiceFirst[c], this.choiceFirst[c + 1]), outcomeStart[placeOf[c]]);
        return out;
      };
      outcomeTarget = reorder(this.target);
      outcomeProb = reorder(this.prob);
      outcomeReward = reorder(this.reward);
      if (outcomePotentialReward) outcomePotentialReward = reorder(outcomePotentialReward);
      for (let t = 0; t < this.termNames.length; t++) {
        const column = this.termReward[t];
        outcomeTermReward.push(column ? reorder(column) : new Float64Array(outcomeCount));
      }
    }

    return {
      stateCount,
      choiceCount,
      outcomeCount,
      stateIds: this.stateIds,
      stateIndex: this.stateIndex,
      stateLabels: this.stateLabels,
      terminal: fitted(this.terminal, stateCount),
      actionNames: this.actionNames,
      choiceStart,
      choiceAction,
      choiceTransition,
      outcomeStart,
      outcomeTarget,
      outcomeProb,
      outcomeReward,
      termNames: this.termNames,
      outcomeTermReward,
      outcomePotentialReward,
      potential,
      startState: Int32Array.from(start, (e) => e.state),
      startProb: Float64Array.from(start, (e) => e.probability),
      discount: this.options.discount,
      horizon: this.options.horizon,
      maximize: this.options.maximize,
      stateSpan: this.stateSpans,
    };
  }

  /** Grows every outcome column together, so one index addresses all of them. */
  private makeOutcomeRoom(needed: number): void {
    if (needed <= this.target.length) return;
    this.target = withRoom(this.target, needed);
    const size = this.target.length;
    const grow = (column: Float64Array): Float64Array => {
      const bigger = new Float64Array(size);
      bigger.set(column.subarray(0, this.outcomeCount));
      return bigger;
    };
    this.prob = grow(this.prob);
    this.reward = grow(this.reward);
    if (this.potentialReward) this.potentialReward = grow(this.potentialReward);
    for (let t = 0; t < this.termReward.length; t++) {
      const column = this.termReward[t];
      if (column) this.termReward[t] = grow(column);
    }
  }

  private checkOpen(): void {
    if (this.finished)
      throw new Error('ModelBuilder.finish() was already called; start a new builder for another model');
  }

  private term(name: string): number {
    let t = this.termIndex.get(name);
    if (t === undefined) {
      t = this.termNames.length;
      this.termNames.push(name);
      this.termIndex.set(name, t);
      this.termReward.push(undefined);
    }
    return t;
  }
}
