import type { Span, TerminalKind } from '../spec/types';

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
}

/** A state's readable name: its label when generated, else its id. */
export function stateName(model: CompiledModel, state: number): string {
  return model.stateLabels?.[state] ?? model.stateIds[state];
}

/** Incrementally builds a CompiledModel; states must be added before the choices that use them. */
export class ModelBuilder {
  private readonly stateIds: string[] = [];
  private readonly stateIndex = new Map<string, number>();
  private readonly stateLabels: (string | undefined)[] = [];
  private readonly stateSpans: Span[] = [];
  private readonly terminal: number[] = [];
  private readonly actionIndex = new Map<string, number>();
  private readonly actionNames: string[] = [];
  private readonly termIndex = new Map<string, number>();
  private readonly termNames: string[] = [];
  // Choices are collected per state, then laid out in state order by finish().
  private readonly choicesOf: Array<Array<{ action: number; transition: number; first: number; count: number }>> = [];
  private readonly target: number[] = [];
  private readonly prob: number[] = [];
  private readonly reward: number[] = [];
  private readonly potentialReward: number[] = [];
  private readonly termReward: number[][] = [];
  private hasPotential = false;

  constructor(
    private readonly options: { discount: number; horizon?: number; maximize: boolean; terms?: string[] },
  ) {
    for (const t of options.terms ?? []) this.term(t);
  }

  addState(id: string, terminal: TerminalKind | undefined, span: Span, label?: string): number {
    const existing = this.stateIndex.get(id);
    if (existing !== undefined) return existing;
    const index = this.stateIds.length;
    this.stateIds.push(id);
    this.stateIndex.set(id, index);
    this.stateLabels.push(label);
    this.stateSpans.push(span);
    this.terminal.push(terminal ? TERMINAL_CODE[terminal] : NOT_TERMINAL);
    this.choicesOf.push([]);
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
    outcomes: ReadonlyArray<{ target: number; probability: number; reward: number; terms?: ReadonlyArray<[string, number]>; shaping?: number }>,
  ): void {
    let actionId = this.actionIndex.get(action);
    if (actionId === undefined) {
      actionId = this.actionNames.length;
      this.actionNames.push(action);
      this.actionIndex.set(action, actionId);
    }
    const first = this.target.length;
    for (const o of outcomes) {
      const k = this.target.length;
      this.target.push(o.target);
      this.prob.push(o.probability);
      this.reward.push(o.reward);
      this.potentialReward.push(o.shaping ?? 0);
      if (o.shaping !== undefined) this.hasPotential = true;
      for (const [name, value] of o.terms ?? []) {
        const t = this.term(name);
        this.termReward[t][k] = (this.termReward[t][k] ?? 0) + value;
      }
    }
    this.choicesOf[state].push({ action: actionId, transition, first, count: outcomes.length });
  }

  finish(start: ReadonlyArray<{ state: number; probability: number }>, potential?: Float64Array): CompiledModel {
    const stateCount = this.stateIds.length;
    let choiceCount = 0;
    for (const list of this.choicesOf) choiceCount += list.length;
    const outcomeCount = this.target.length;
    const choiceStart = new Int32Array(stateCount + 1);
    const choiceAction = new Int32Array(choiceCount);
    const choiceTransition = new Int32Array(choiceCount);
    const outcomeStart = new Int32Array(choiceCount + 1);
    const outcomeTarget = new Int32Array(outcomeCount);
    const outcomeProb = new Float64Array(outcomeCount);
    const outcomeReward = new Float64Array(outcomeCount);
    const outcomePotentialReward = this.hasPotential ? new Float64Array(outcomeCount) : undefined;
    const outcomeTermReward = this.termNames.map(() => new Float64Array(outcomeCount));
    let c = 0;
    let k = 0;
    for (let s = 0; s < stateCount; s++) {
      choiceStart[s] = c;
      for (const choice of this.choicesOf[s]) {
        choiceAction[c] = choice.action;
        choiceTransition[c] = choice.transition;
        outcomeStart[c] = k;
        for (let i = choice.first; i < choice.first + choice.count; i++, k++) {
          outcomeTarget[k] = this.target[i];
          outcomeProb[k] = this.prob[i];
          outcomeReward[k] = this.reward[i];
          if (outcomePotentialReward) outcomePotentialReward[k] = this.potentialReward[i];
          for (let t = 0; t < this.termNames.length; t++) outcomeTermReward[t][k] = this.termReward[t][i] ?? 0;
        }
        c++;
      }
    }
    choiceStart[stateCount] = c;
    outcomeStart[choiceCount] = k;
    return {
      stateCount,
      choiceCount,
      outcomeCount,
      stateIds: this.stateIds,
      stateIndex: this.stateIndex,
      stateLabels: this.stateLabels.some((l) => l !== undefined) ? this.stateLabels : undefined,
      terminal: Uint8Array.from(this.terminal),
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
      startState: Int32Array.from(start.map((e) => e.state)),
      startProb: Float64Array.from(start.map((e) => e.probability)),
      discount: this.options.discount,
      horizon: this.options.horizon,
      maximize: this.options.maximize,
      stateSpan: this.stateSpans,
    };
  }

  private term(name: string): number {
    let t = this.termIndex.get(name);
    if (t === undefined) {
      t = this.termNames.length;
      this.termNames.push(name);
      this.termIndex.set(name, t);
      this.termReward.push([]);
    }
    return t;
  }
}
