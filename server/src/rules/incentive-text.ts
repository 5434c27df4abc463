/**
 * Wording and locations shared by the reward-incentive rules: numbers printed the same way in every
 * message, transitions named "state --action--> next", and traces and related locations built from
 * model choices and outcomes.
 */
import { stateName, type CompiledModel } from '../model/compiled';
import type { ParsedSpec, Span, SpecOutcome } from '../load/types';
import type { PathStep } from '../analysis/paths';
import type { IncompleteModel, RelatedLocation, TraceStep } from './types';

/**
 * A number for a message: about three significant digits, at least one decimal for values of
 * ordinary size ("48.1", "7.2", "-2.0"), exponent notation for very large or very small values.
 */
export function formatAmount(x: number): string {
  if (x === Infinity) return 'infinity';
  if (x === -Infinity) return '-infinity';
  // A figure that is not known is never printed as a number.
  if (Number.isNaN(x)) return 'undetermined';
  if (x === 0) return '0';
  const magnitude = Math.abs(x);
  if (magnitude >= 1e6 || magnitude < 1e-3) return x.toExponential(2).replace('e+', 'e');
  const digits = Math.min(6, Math.max(1, 2 - Math.floor(Math.log10(magnitude))));
  let text = x.toFixed(digits);
  // Trailing zeros carry no information beyond the first decimal.
  while (text.includes('.') && text.endsWith('0') && !/\.\d$/.test(text)) text = text.slice(0, -1);
  return text === '-0.0' ? '0.0' : text;
}

/**
 * Value bounds for a message: one number when both ends print alike, "at least" or "at most" with
 * one finite end, "undetermined" when neither end is finite and they differ (an undefined total).
 */
export function formatBounds(interval: { lower: number; upper: number }): string {
  const { lower, upper } = interval;
  const low = formatAmount(lower);
  const high = formatAmount(upper);
  if (low === high) return low;
  if (Number.isNaN(lower) || Number.isNaN(upper) || (lower === -Infinity && upper === Infinity)) return 'undetermined';
  if (upper === Infinity) return `at least ${low}`;
  if (lower === -Infinity) return `at most ${high}`;
  return `between ${low} and ${high}`;
}

/** A number with its sign, for amounts paid on a step ("+0.5", "-1.0"). */
export function formatSigned(x: number): string {
  const text = formatAmount(x);
  return x > 0 ? `+${text}` : text;
}

/** A probability as a percentage ("97%", "0.4%"). */
export function formatProbability(p: number): string {
  // Probabilities come from bounds at most about 1e-6 wide: closer than that to 0 or 1 is 0 or 1.
  const percent = p <= 1e-6 ? 0 : p >= 1 - 1e-6 ? 100 : p * 100;
  if (percent === 0 || percent === 100) return `${percent}%`;
  if (percent >= 99.95 && percent < 100) return '>99.9%';
  if (percent < 0.05) return '<0.1%';
  return `${percent >= 10 ? percent.toFixed(0) : percent.toFixed(1)}%`;
}

/** The model state that owns a choice. */
export function ownerOfChoice(model: CompiledModel, choice: number): number {
  return lastRowAtOrBefore(model.choiceStart, model.stateCount, choice);
}

/** The choice an outcome belongs to. */
export function choiceOfOutcome(model: CompiledModel, outcome: number): number {
  return lastRowAtOrBefore(model.outcomeStart, model.choiceCount, outcome);
}

/** In a CSR row-start array of `rows` rows, the row whose range holds `index` (binary search). */
function lastRowAtOrBefore(rowStart: Int32Array, rows: number, index: number): number {
  let low = 0;
  let high = rows - 1;
  while (low < high) {
    const mid = (low + high + 1) >> 1;
    if (rowStart[mid] <= index) low = mid;
    else high = mid - 1;
  }
  return low;
}

export function actionOf(model: CompiledModel, choice: number): string {
  return model.actionNames[model.choiceAction[choice]];
}

/** "state --action--> next" for one outcome, or "state --action-->" for a whole choice. */
export function describeStep(model: CompiledModel, choice: number, outcome = -1): string {
  const from = stateName(model, ownerOfChoice(model, choice));
  const head = `${from} --${actionOf(model, choice)}-->`;
  return outcome < 0 ? head : `${head} ${stateName(model, model.outcomeTarget[outcome])}`;
}

/**
 * Where a choice's transition is written. A TypeScript model's choices all come from its `outcomes`
 * function, also those of start states (whose own span is `start`); otherwise the state's declaration.
 */
export function choiceSpan(spec: ParsedSpec, model: CompiledModel, choice: number): Span {
  const transition = spec.transitions[model.choiceTransition[choice]];
  if (transition) return transition.span;
  return spec.typescript?.members.outcomes?.nameSpan ?? stateSpan(spec, model, ownerOfChoice(model, choice));
}

/**
 * The written outcome behind a model outcome of a JSON spec, or undefined (TypeScript models, or
 * when it cannot be told). The compiler keeps a transition's outcomes in written order, so the k-th
 * outcome of a choice is the k-th outcome of its transition when the counts agree; otherwise (a
 * declared part that lost a broken outcome) the first written outcome into the same state.
 */
export function writtenOutcome(
  spec: ParsedSpec,
  model: CompiledModel,
  choice: number,
  outcome: number,
): SpecOutcome | undefined {
  const transition = spec.transitions[model.choiceTransition[choice]];
  if (!transition) return undefined;
  const index = outcome - model.outcomeStart[choice];
  const count = model.outcomeStart[choice + 1] - model.outcomeStart[choice];
  if (transition.outcomes.length === count) return transition.outcomes[index];
  const target = model.stateIds[model.outcomeTarget[outcome]];
  return transition.outcomes.find((o) => o.state === target);
}

/** Where one outcome is written: the written outcome, else its choice's transition. */
export function outcomeSpan(spec: ParsedSpec, model: CompiledModel, choice: number, outcome: number): Span {
  const transition = spec.transitions[model.choiceTransition[choice]];
  if (!transition) return choiceSpan(spec, model, choice);
  return writtenOutcome(spec, model, choice, outcome)?.span ?? transition.span;
}

/** Where a state is declared (the model keeps the declaration span). */
export function stateSpan(spec: ParsedSpec, model: CompiledModel, state: number): Span {
  return model.stateSpan[state] ?? spec.rootSpan;
}

/** A concrete state/action sequence for Finding.trace. */
export function traceOfPath(spec: ParsedSpec, model: CompiledModel, steps: readonly PathStep[]): TraceStep[] {
  return steps.map((step) =>
    step.choice >= 0
      ? {
          state: stateName(model, step.state),
          action: actionOf(model, step.choice),
          span: choiceSpan(spec, model, step.choice),
        }
      : { state: stateName(model, step.state), span: stateSpan(spec, model, step.state) },
  );
}

/** "a -> b -> c" for a message (at most `limit` states; longer paths keep both ends). */
export function describePath(model: CompiledModel, steps: readonly PathStep[], limit = 12): string {
  const names = steps.map((step) => stateName(model, step.state));
  if (names.length <= limit) return names.join(' -> ');
  const head = names.slice(0, Math.ceil(limit / 2));
  const tail = names.slice(names.length - Math.floor(limit / 2));
  return `${head.join(' -> ')} -> ... (${names.length - head.length - tail.length} more) -> ${tail.join(' -> ')}`;
}

/** Related locations for the transitions of a path, each saying what the step pays. */
export function relatedOfPath(
  spec: ParsedSpec,
  model: CompiledModel,
  steps: readonly PathStep[],
  amount: (outcome: number) => number = (k) => model.outcomeReward[k],
  limit = 20,
): RelatedLocation[] {
  const related: RelatedLocation[] = [];
  for (const step of steps) {
    if (step.choice < 0 || step.outcome < 0) continue;
    if (related.length >= limit) break;
    related.push({
      span: outcomeSpan(spec, model, step.choice, step.outcome),
      message: `${describeStep(model, step.choice, step.outcome)} pays ${formatSigned(amount(step.outcome))}`,
    });
  }
  return related;
}

/** The middle of a value interval (bounds are at most the analysis precision apart). */
export function midpoint(interval: { lower: number; upper: number }): number {
  if (interval.lower === interval.upper) return interval.lower;
  if (!Number.isFinite(interval.lower) || !Number.isFinite(interval.upper)) {
    return interval.lower === -Infinity && interval.upper === Infinity
      ? NaN
      : Number.isFinite(interval.lower)
        ? interval.upper
        : interval.lower;
  }
  return (interval.lower + interval.upper) / 2;
}

/** The middle of a state's bounds. */
export function valueAt(bounds: { lower: Float64Array; upper: Float64Array }, state: number): number {
  return midpoint({ lower: bounds.lower[state], upper: bounds.upper[state] });
}

/** What a graph finding on a spec that does not compile adds to its message, else ''. */
export function incompleteNote(incomplete: IncompleteModel | undefined): string {
  if (!incomplete) return '';
  return ` (the spec does not compile yet, so this is read from its declared part with the broken transitions left out: ${incomplete.reason})`;
}

/** One reward amount of a model outcome, with where it is written and what to call it. */
export interface RewardAmount {
  value: number;
  /** The term's name, or null for a plain reward. */
  term: string | null;
  choice: number;
  outcome: number;
  span: Span;
}

/**
 * Visits the reward amounts of every model outcome as they are written: in a JSON spec each
 * written reward part (plain number or term) of the outcome, exact as typed; in a TypeScript model
 * each term's part, or the scalar reward when the model has no terms. Shaping from a potential is
 * not a written reward and is left out.
 */
export function forEachRewardAmount(
  spec: ParsedSpec,
  model: CompiledModel,
  visit: (amount: RewardAmount) => void,
): void {
  for (let c = 0; c < model.choiceCount; c++) {
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      const written = writtenOutcome(spec, model, c, k);
      if (written) {
        for (const part of written.reward)
          visit({ value: part.value, term: part.term, choice: c, outcome: k, span: part.span });
        continue;
      }
      const span = choiceSpan(spec, model, c);
      if (model.termNames.length === 0)
        visit({ value: model.outcomeReward[k], term: null, choice: c, outcome: k, span });
      model.termNames.forEach((term, t) =>
        visit({ value: model.outcomeTermReward[t][k], term, choice: c, outcome: k, span }),
      );
    }
  }
}
