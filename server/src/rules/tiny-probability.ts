import { formatNumber, quote } from '../load/names';
import { describeStep, writtenOutcome, choiceSpan } from './incentive-text';
import { transitionLabel } from './spec-walk';
import type { Span } from '../load/types';
import type { Rule } from './types';

/** An outcome so unlikely that it cannot matter to any value, and is often a mistyped exponent. */
export const tinyProbability: Rule = {
  id: 'tiny-probability',
  defaultSeverity: 'info',
  summary: 'An outcome probability is positive but below 1e-12.',
  needs: 'graph',
  sources: ['json', 'enumerable'],
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
    const model = ctx.model;
    if (!model) return;
    // One finding per place in the text: a written probability, or the generating function.
    const places = new Map<string, { span: Span; probability: number; what: string; count: number }>();
    for (let c = 0; c < model.choiceCount; c++) {
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        const p = model.outcomeProb[k];
        if (!(p > 0 && p < minimum)) continue;
        const written = writtenOutcome(spec, model, c, k);
        const transition = spec.transitions[model.choiceTransition[c]];
        const span = written?.probabilitySpan ?? choiceSpan(spec, model, c);
        const key = `${span.start}:${span.end}`;
        const known = places.get(key);
        if (known) {
          known.count += written ? 0 : 1;
          continue;
        }
        const what =
          written && transition
            ? `${quote(written.state)} after ${transitionLabel(spec, transition)}`
            : `${describeStep(model, c, k)}`;
        places.set(key, { span, probability: written?.probability ?? p, what, count: 1 });
      }
    }
    for (const place of places.values()) {
      const more =
        place.count > 1
          ? ` (and ${place.count - 1} more such outcome${place.count > 2 ? 's' : ''} from the same code)`
          : '';
      ctx.report({
        message:
          `the probability ${formatNumber(place.probability)} of ${place.what} is below ${formatNumber(minimum)}${more}: ` +
          `the outcome changes no value by more than ${formatNumber(place.probability)} times its reward, and no learner will see it; check the exponent, or write 0 if it cannot happen`,
        span: place.span,
      });
    }
  },
};
