import { formatNumber, quote } from '../load/names';
import { isProbability } from './probability-sum';
import { forEachOutcome, malformedCost, transitionLabel } from './spec-walk';
import type { ParsedSpec, SpecTransition } from '../load/types';
import type { Rule } from './types';

/** Every outcome (and start) probability must lie in [0, 1]. */
export const negativeProbability: Rule = {
  id: 'negative-probability',
  defaultSeverity: 'error',
  summary: 'An outcome probability is below 0 or above 1.',
  needs: 'spec',
  sources: ['json'],
  documentation: `
**Why it matters.** A probability below 0 or above 1 is not a probability. It usually comes from
a sign slip (\`-0.1\`), a percentage written as a number (\`80\` for 0.8), or a number too large
to represent (\`1e400\`). No distribution matches it, so the spec has no defined dynamics there.

**When it fires.** An outcome probability in a map or list \`to\`, or a probability of a
\`start\` map, is below 0, above 1, or not a number. (The JSON Schema says the same, but this
rule reports it once, with the transition it belongs to.) The spec is not compiled until it is
fixed; \`probability-sum\` waits for this rule's findings to be fixed before it adds anything up.

**How to fix.** Write the probability as a fraction from 0 to 1.

**Example.**
\`\`\`jsonc
{ "from": "roof", "action": "east", "to": { "drop": 1.1, "crash": -0.1 } }   // both fire
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    forEachOutcome(spec, (outcome, transition) => {
      if (isProbability(outcome.probability)) return;
      ctx.report({
        message: `the probability ${describe(outcome.probability)} of ${quote(outcome.state)} after ${transitionLabel(spec, transition)} is ${problem(outcome.probability)}: no distribution matches it${unusedTail(spec, transition, ', so the spec is not compiled')}`,
        span: outcome.probabilitySpan,
      });
    });
    for (const entry of spec.start) {
      if (isProbability(entry.probability)) continue;
      ctx.report({
        message: `the start probability ${describe(entry.probability)} of ${quote(entry.state)} is ${problem(entry.probability)}: no start distribution matches it, so the spec is not compiled`,
        span: entry.probabilitySpan ?? entry.span,
      });
    }
  },
};

function describe(value: number): string {
  return Number.isFinite(value) ? formatNumber(value) : `${formatNumber(value)} (the number is too large to represent)`;
}

function problem(value: number): string {
  if (Number.isNaN(value)) return 'not a number';
  if (value < 0) return 'below 0';
  // A number up to 100 is often a percentage written without the division.
  if (value >= 2 && value <= 100) return `above 1 (if it is a percentage, write ${formatNumber(value / 100)})`;
  return 'above 1';
}

/** `whenUsed`, or for a transition the compiler never uses, what that transition really costs. */
function unusedTail(spec: ParsedSpec, transition: SpecTransition, whenUsed: string): string {
  const unused = malformedCost(spec, transition, '');
  return unused ? `; ${unused}` : whenUsed;
}
