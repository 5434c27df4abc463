import { formatNumber, quote } from '../spec/names';
import { forEachOutcome, transitionLabel } from './spec-walk';
import type { Rule } from './types';

/** An outcome so unlikely that it cannot matter to any value, and is often a mistyped exponent. */
export const tinyProbability: Rule = {
  id: 'tiny-probability',
  defaultSeverity: 'info',
  summary: 'An outcome probability is positive but below 1e-12.',
  needs: 'spec',
  thresholds: {
    minimum: {
      default: 1e-12,
      description:
        'Probabilities below this are reported. 1e-12 is a million times below the default precision of the value bounds (1e-6), so such an outcome changes no reported value unless its reward is above 1e6; it is about 4500 times the rounding unit of a 64-bit float (2.2e-16), so it is not rounding noise either.',
    },
  },
  documentation: `
**Why it matters.** An outcome with probability 1e-15 contributes at most 1e-15 times its reward
to any value: far below the precision of the analysis and of any learner. Such numbers are most
often a slip of the exponent (\`1e-15\` for \`1e-5\`) or a leftover of a generated table; if the
event really is that rare, a learner will never see it in training anyway, and a safety case
should not rely on a simulator to exercise it.

**When it fires.** An outcome probability (in a map or list \`to\`) is above 0 and below the
\`minimum\` threshold (default 1e-12; set \`"tiny-probability.minimum"\` in the config).

**How to fix.** Check the exponent. If the event is meant to be impossible, write 0 or remove
the outcome; if it is meant to be rare but relevant, analyse it separately (a rare failure
deserves its own check, not a rounding-level probability).

**Example.**
\`\`\`jsonc
{ "from": "roof", "action": "east", "to": { "drop": 0.999999999999999, "crash": 1e-15 } }
\`\`\`
`.trim(),
  check(ctx) {
    const minimum = ctx.threshold('minimum');
    const spec = ctx.spec;
    forEachOutcome(spec, (outcome, transition) => {
      const p = outcome.probability;
      if (!(p > 0 && p < minimum)) return;
      ctx.report({
        message:
          `the probability ${formatNumber(p)} of ${quote(outcome.state)} after ${transitionLabel(spec, transition)} is below ${formatNumber(minimum)}: ` +
          `the outcome changes no value by more than ${formatNumber(p)} times its reward, and no learner will see it; check the exponent, or write 0 if it cannot happen`,
        span: outcome.probabilitySpan,
      });
    });
  },
};
