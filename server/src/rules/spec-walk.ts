/**
 * Walking a ParsedSpec for the structural rules. A transition whose `from` or `action` is a list
 * is expanded into several SpecTransitions that share the same text; these helpers visit each
 * written outcome and reward once, so that a finding is reported once per place in the text.
 */
import { arrow, quote } from '../load/names';
import { actionSetOf } from '../model/compile';
import type { ParsedSpec, RewardPart, Span, SpecOutcome, SpecState, SpecTransition } from '../load/types';
import { JsonEditor } from './json-edits';
import type { Fix, RuleContext } from './types';

/** `transitions[3] ('roof' --hover-->)`, or with a list `from`/`action` the first pair and how many more. */
export function transitionLabel(spec: ParsedSpec, transition: SpecTransition): string {
  const pairs = expansionsOf(spec, transition.sourceIndex).length;
  const more = pairs > 1 ? ` and ${pairs - 1} more pair${pairs > 2 ? 's' : ''}` : '';
  return `transitions[${transition.sourceIndex}] (${arrow(transition.from, transition.action)}${more})`;
}

const expansionCache = new WeakMap<ParsedSpec, Map<number, SpecTransition[]>>();

/** Every SpecTransition written by the transition at `sourceIndex` (one per from/action pair). */
export function expansionsOf(spec: ParsedSpec, sourceIndex: number): SpecTransition[] {
  let bySource = expansionCache.get(spec);
  if (!bySource) {
    bySource = new Map();
    for (const transition of spec.transitions) {
      const list = bySource.get(transition.sourceIndex);
      if (list) list.push(transition);
      else bySource.set(transition.sourceIndex, [transition]);
    }
    expansionCache.set(spec, bySource);
  }
  return bySource.get(sourceIndex) ?? [];
}

const firstExpansionCache = new WeakMap<ParsedSpec, SpecTransition[]>();

/** The first SpecTransition of each written transition, in document order (one list per spec, shared: do not change it). */
export function writtenTransitions(spec: ParsedSpec): SpecTransition[] {
  const cached = firstExpansionCache.get(spec);
  if (cached) return cached;
  const seen = new Set<number>();
  const result: SpecTransition[] = [];
  for (const transition of spec.transitions) {
    if (seen.has(transition.sourceIndex)) continue;
    seen.add(transition.sourceIndex);
    result.push(transition);
  }
  firstExpansionCache.set(spec, result);
  return result;
}

/** Why the compiler skips every from/action pair a written transition defines, per source index. */
const unusedCache = new WeakMap<ParsedSpec, Map<number, 'terminal' | 'duplicate'>>();

/**
 * Why the compiled model never uses the written transition at `sourceIndex`, or undefined when some
 * pair of it is used (or the compiler refuses the spec over it). The compiler skips transitions out
 * of terminal states and every later definition of a (state, action) pair (the first one wins), so a
 * malformed number there changes no value: messages must not claim that it stops compilation.
 */
export function unusedReason(spec: ParsedSpec, sourceIndex: number): 'terminal' | 'duplicate' | undefined {
  let unused = unusedCache.get(spec);
  if (!unused) {
    unused = new Map();
    const stateById = new Map<string, SpecState>();
    for (const state of spec.states) if (!stateById.has(state.id)) stateById.set(state.id, state);
    const defined = new Set<string>();
    const used = new Set<number>();
    const skipped = new Map<number, 'terminal' | 'duplicate'>();
    // The same walk as the compiler's, in the same order, so "first definition" means the same pair.
    for (const transition of spec.transitions) {
      const from = stateById.get(transition.from);
      let reason: 'terminal' | 'duplicate' | undefined;
      if (from?.terminal) reason = 'terminal';
      else if (from) {
        const pairKey = `${from.id}\u0000${transition.action}`;
        if (defined.has(pairKey)) reason = 'duplicate';
        else defined.add(pairKey);
      }
      if (reason === undefined) used.add(transition.sourceIndex);
      else if (skipped.get(transition.sourceIndex) !== 'duplicate') skipped.set(transition.sourceIndex, reason);
    }
    for (const [index, reason] of skipped) if (!used.has(index)) unused.set(index, reason);
    unusedCache.set(spec, unused);
  }
  return unused.get(sourceIndex);
}

/**
 * The cost clause of a finding about a malformed number in a transition: `whenUsed` when the
 * compiled model depends on the transition, else what a never-used transition really costs.
 */
export function malformedCost(spec: ParsedSpec, transition: SpecTransition, whenUsed: string): string {
  const reason = unusedReason(spec, transition.sourceIndex);
  if (reason === undefined) return whenUsed;
  const why =
    reason === 'terminal'
      ? 'it leaves a terminal state, so it is never taken'
      : 'an earlier transition defines the same state and action and wins';
  return `the transition is never used (${why}), so no value depends on it, but the spec is still malformed; fix or delete it`;
}

/** Each written outcome once with the first transition that has it, and each written reward part once: per spec, as many rules walk them. */
const writtenCache = new WeakMap<
  ParsedSpec,
  { outcomes: SpecOutcome[]; transitions: SpecTransition[]; parts?: Array<{ part: RewardPart; at: number }> }
>();

function writtenOutcomes(spec: ParsedSpec): {
  outcomes: SpecOutcome[];
  transitions: SpecTransition[];
  parts?: Array<{ part: RewardPart; at: number }>;
} {
  let written = writtenCache.get(spec);
  if (!written) {
    // The loader makes each outcome in one list, which the pairs of a written transition (its
    // `from` and `action` lists) share: a list seen before holds nothing new.
    const seen = new Set<SpecOutcome[]>();
    let previous: SpecOutcome[] | undefined;
    written = { outcomes: [], transitions: [] };
    for (const transition of spec.transitions) {
      const list = transition.outcomes;
      if (list === previous || seen.has(list)) continue;
      previous = list;
      seen.add(list);
      for (const outcome of list) {
        written.outcomes.push(outcome);
        written.transitions.push(transition);
      }
    }
    writtenCache.set(spec, written);
  }
  return written;
}

/** Visits each written outcome once, with the first transition that has it. */
export function forEachOutcome(
  spec: ParsedSpec,
  visit: (outcome: SpecOutcome, transition: SpecTransition) => void,
): void {
  const { outcomes, transitions } = writtenOutcomes(spec);
  for (let i = 0; i < outcomes.length; i++) visit(outcomes[i], transitions[i]);
}

/** Span offsets stay below 2^25 (the loader reads at most 16 MB), so start * 2^25 + end names a span exactly. */
const SPAN_KEY = 2 ** 25;

/** Visits each written reward value once (a transition's reward is shared by its outcomes). */
export function forEachRewardPart(
  spec: ParsedSpec,
  visit: (part: RewardPart, outcome: SpecOutcome, transition: SpecTransition) => void,
): void {
  const written = writtenOutcomes(spec);
  if (!written.parts) {
    const parts: Array<{ part: RewardPart; at: number }> = [];
    // In JSON a written value is known by the offset it starts at: one bit per offset marks the
    // values seen, with no hashing (the outcomes of a transition with one reward share it). Other
    // sources are deduplicated by span, since a TypeScript model's outcomes may share code spans.
    const json = spec.format === 'json';
    let startSeen = new Uint8Array(json ? 1024 : 0);
    const spanSeen = new Set<number | string>();
    let previous: RewardPart[] | undefined;
    for (let i = 0; i < written.outcomes.length; i++) {
      const reward = written.outcomes[i].reward;
      // The common sharing (one transition's outcomes in a row) is skipped without a lookup.
      if (reward === previous) continue;
      previous = reward;
      for (const part of reward) {
        const { start, end } = part.span;
        if (json) {
          const byte = start >> 3;
          if (byte >= startSeen.length) {
            const grown = new Uint8Array(Math.max(2 * startSeen.length, byte + 1));
            grown.set(startSeen);
            startSeen = grown;
          }
          const bit = 1 << (start & 7);
          if (startSeen[byte] & bit) continue;
          startSeen[byte] |= bit;
        } else {
          const key = end < SPAN_KEY ? start * SPAN_KEY + end : `${start}:${end}`;
          if (spanSeen.has(key)) continue;
          spanSeen.add(key);
        }
        parts.push({ part, at: i });
      }
    }
    written.parts = parts;
  }
  for (const { part, at } of written.parts) visit(part, written.outcomes[at], written.transitions[at]);
}

/** An editor for quick fixes, for JSON specs only (TypeScript specs get no text fixes from these rules). */
export function jsonEditorFor(ctx: RuleContext): JsonEditor | undefined {
  return ctx.spec.format === 'json' ? new JsonEditor(ctx.text) : undefined;
}

/** "Change to 'x'": replaces a quoted name; undefined when the text there is not a quoted string. */
export function renameFix(text: string, span: Span, replacement: string): Fix | undefined {
  const written = text.slice(span.start, span.end);
  // Only a quoted name can be swapped for another quoted name without changing the syntax.
  if (!/^(".*"|'.*')$/s.test(written)) return undefined;
  return { title: `Change to ${quote(replacement)}`, edits: [{ span, newText: JSON.stringify(replacement) }] };
}

/** Visits each declared non-terminal state once, with its action set (undefined when it has none). */
export function forEachNonTerminalState(
  spec: ParsedSpec,
  visit: (state: SpecState, offered: readonly string[] | undefined) => void,
): void {
  const seen = new Set<string>();
  for (const state of spec.states) {
    // A state with a misspelt terminal kind was meant to be terminal; its schema finding says why.
    if (state.terminal || state.terminalUnread || seen.has(state.id)) continue;
    seen.add(state.id);
    visit(state, actionSetOf(spec, state));
  }
}
