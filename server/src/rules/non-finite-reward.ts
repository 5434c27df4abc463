import { formatNumber, quote } from '../load/names';
import { forEachRewardPart, malformedCost, transitionLabel } from './spec-walk';
import type { Rule } from './types';

/** Rewards (and shaping potentials) must be finite numbers, or returns are undefined. */
export const nonFiniteReward: Rule = {
  id: 'non-finite-reward',
  defaultSeverity: 'error',
  summary: 'A reward (or shaping potential) is NaN or infinite.',
  needs: 'spec',
  sources: ['json', 'enumerable', 'sampled'],
  documentation: `
**Why it matters.** An infinite or NaN reward makes every return that can include it infinite or
NaN: values, gradients and losses built on it are meaningless, and one such sample can wreck a
training run. In JSON it appears as a literal too large for a 64-bit float (\`1e400\`), which
JSON parsers turn into infinity without complaint; in code as a division by zero.

**When it fires.** A transition's or outcome's reward (or one of its terms), or a
\`shaping.potential\` value, is infinite or NaN. The spec is not compiled until it is fixed.

**How to fix.** Use a finite number. To express "this must never happen", end the episode in a
\`"failure"\` terminal with a large but finite penalty, and check the result with \`objective-sign\`
and \`failure-preferred\`.

**Example.**
\`\`\`jsonc
{ "from": "roof", "action": "jump", "to": "crash", "reward": -1e400 }   // -infinity
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    const unit = spec.objective === 'minimize' ? 'cost' : 'reward';
    forEachRewardPart(spec, (part, outcome, transition) => {
      if (Number.isFinite(part.value)) return;
      const term = part.term === null ? '' : ` (term ${quote(part.term)})`;
      ctx.report({
        message: `the ${unit}${term} of ${transitionLabel(spec, transition)} toward ${quote(outcome.state)} is ${describe(part.value, spec.format)}: ${malformedCost(spec, transition, 'every return that can include it is undefined, so the spec is not compiled')}`,
        span: part.span,
      });
    });
    for (const entry of spec.potential) {
      if (Number.isFinite(entry.value)) continue;
      ctx.report({
        message: `the shaping potential of ${quote(entry.state)} is ${describe(entry.value, spec.format)}: every shaping reward into or out of ${quote(entry.state)} is undefined, so the spec is not compiled`,
        span: entry.valueSpan ?? entry.span,
      });
    }
  },
};

function describe(value: number, format: 'json' | 'ts'): string {
  if (Number.isNaN(value)) return 'NaN (not a number)';
  // In JSON the only way to write an infinite number is a literal beyond the float range.
  return format === 'json'
    ? `${formatNumber(value)} (the number is too large for a 64-bit float)`
    : formatNumber(value);
}
