import { PROBABILITY_SUM_TOLERANCE } from '../model/compile';
import { formatNumber } from '../load/names';
import type { Span, SpecTransition } from '../load/types';
import { malformedCost, transitionLabel, writtenTransitions } from './spec-walk';
import { describeCall } from './model-error';
import type { Fix, Rule, RuleContext } from './types';

/** True for a number in [0, 1] (false for NaN). */
export function isProbability(value: number): boolean {
  return value >= 0 && value <= 1;
}

/**
 * The outcome probabilities of a transition (and of a `start` map) must add up to 1: otherwise
 * some share of the episodes has no defined next state, or the outcomes claim more than certainty.
 */
export const probabilitySum: Rule = {
  id: 'probability-sum',
  defaultSeverity: 'error',
  summary: "A transition's outcome probabilities (or the start's) do not add up to 1.",
  needs: 'spec',
  sources: ['json', 'enumerable'],
  documentation: `
**Why it matters.** The outcomes of a transition are a probability distribution over next
states. If they add up to 0.9, a tenth of the episodes that take the action have no defined
next state; if they add up to 1.1, no distribution matches the numbers. A simulator built from
such a table either crashes, silently renormalises, or keeps the last outcome for the remainder:
three different environments from one spec.

**When it fires.** The probabilities in a map or list \`to\`, or in a \`start\` map, add up to
a number more than 1e-9 away from 1 (the tolerance absorbs rounding of decimal fractions such
as 0.1 + 0.2). Probabilities outside [0, 1] are \`negative-probability\`'s and are not summed
here. The spec is not compiled until the finding is fixed. In a TypeScript model: the outcomes
\`outcomes(state, action)\` returns (reported at \`outcomes\`, with the state and action).

**How to fix.** Correct the numbers, or add the missing outcome. The quick fix "normalise"
divides each probability by their sum, which keeps their ratios.

**Example.**
\`\`\`jsonc
{ "from": "roof", "action": "east", "to": { "drop": 0.8, "crash": 0.1 } }   // adds up to 0.9
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    for (const problem of spec.typescript?.structuralProblems ?? []) {
      if (problem.kind !== 'probability-sum') continue;
      const where = problem.elsewhere ? ` (at ${problem.elsewhere})` : '';
      ctx.report({
        message: `${describeCall(problem)} returned ${problem.message.replace('the outcome probabilities', 'outcome probabilities that')}${where}: no distribution matches them, so the MDP is undefined there and no values are computed`,
        span: problem.span,
      });
    }
    for (const transition of writtenTransitions(spec)) {
      if (transition.incomplete || transition.outcomes.length === 0) continue;
      checkDistribution(
        ctx,
        transition.outcomes,
        transition.toSpan,
        () => `the outcome probabilities of ${transitionLabel(spec, transition)}`,
        'of the episodes that take it have no defined next state',
        transition,
      );
    }
    // The list form of `start` is uniform by construction; only a map can be off.
    const startMap = spec.start.filter((e) => e.probabilitySpan !== undefined);
    if (startMap.length > 0 && spec.startSpan) {
      const probabilities = startMap.map((e) => ({ probability: e.probability, probabilitySpan: e.probabilitySpan! }));
      checkDistribution(
        ctx,
        probabilities,
        spec.startSpan,
        'the start probabilities',
        'of the episodes have no start state',
      );
    }
  },
};

/**
 * Reports a distribution that does not add up to 1. It reads the outcomes (or start entries) as
 * they are: most transitions add up, and are decided without building anything per outcome.
 */
function checkDistribution(
  ctx: RuleContext,
  probabilities: ReadonlyArray<{ probability: number; probabilitySpan: Span }>,
  span: Span,
  what: string | (() => string),
  shortfall: string,
  transition?: SpecTransition,
): void {
  let sum = 0;
  for (const p of probabilities) {
    if (!isProbability(p.probability)) return;
    sum += p.probability;
  }
  const gap = sum - 1;
  if (Math.abs(gap) <= PROBABILITY_SUM_TOLERANCE) return;
  // A transition the compiler never uses does not stop compilation: say what it really costs.
  const unused = transition ? malformedCost(ctx.spec, transition, '') : '';
  const cost =
    gap < 0
      ? `${formatNumber(-gap)} ${shortfall}${unused ? `; ${unused}` : ', so the spec is not compiled'}`
      : `they claim ${formatNumber(gap)} more than certainty, so no distribution matches them${unused ? `; ${unused}` : ' and the spec is not compiled'}`;
  const fixes: Fix[] = [];
  if (sum > 0) {
    fixes.push({
      title: 'Normalise the probabilities (divide each by their sum)',
      edits: probabilities.map((p) => ({
        span: p.probabilitySpan,
        newText: String(Number((p.probability / sum).toPrecision(12))),
      })),
    });
  }
  // Six digits would print a sum just off 1 as "1"; twelve always show a gap above the tolerance.
  const shownSum = formatNumber(sum) === '1' ? String(Number(sum.toPrecision(12))) : formatNumber(sum);
  ctx.report({
    message: `${typeof what === 'string' ? what : what()} add up to ${shownSum}, not 1: ${cost}`,
    span,
    fixes,
  });
}
