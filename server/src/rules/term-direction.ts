import type { RewardTermSpec, Span } from '../load/types';
import { choiceSpan, describeStep, formatAmount, formatSigned, writtenOutcome } from './incentive-text';
import type { Rule } from './types';

/**
 * A reward term declared a `bonus` must never cost, and a `penalty` must never pay. A sign slip in
 * one transition turns a penalty into something the policy seeks out.
 */
export const termDirection: Rule = {
  id: 'term-direction',
  defaultSeverity: 'warning',
  summary: 'A reward term declared `bonus` takes a value against the objective, or a `penalty` one in its favour.',
  needs: 'graph',
  sources: ['json', 'enumerable', 'sampled'],
  documentation: `
**What it finds.** \`rewardTerms\` lets you declare each named reward component a \`bonus\` (it should only
ever help the agent) or a \`penalty\` (it should only ever hurt). This rule flags every reward value of a
term whose sign contradicts its declared direction, for example a \`battery\` penalty written as \`+0.2\`
on one transition. A flipped sign is one of the commonest reward bugs: the policy learns to collect the
"penalty" and the training curves look healthy while the behaviour is wrong.

**When it fires.** Under \`"objective": "maximize"\` a \`bonus\` value below 0 or a \`penalty\` value above 0.
Under \`"objective": "minimize"\` the numbers are costs, so the directions turn around: a \`bonus\` (it
lowers the cost) must be <= 0 and a \`penalty\` >= 0. Terms declared \`either\` are never checked. Zero
is allowed for both directions.

**Fix.** Correct the sign of the value, or declare the term \`either\` if it really goes both ways.

**Thresholds.** None: any value of the wrong sign is a contradiction of what the spec says about itself.
`.trim(),
  check(ctx) {
    const model = ctx.model;
    if (!model) return;
    const terms = new Map<string, RewardTermSpec>(ctx.spec.rewardTerms.map((t) => [t.name, t]));
    const maximize = model.maximize;
    // One finding per place in the text: a written reward value in JSON (a transition written once
    // for several states shares it), a term of the generating function in TypeScript.
    const places = new Map<string, { span: Span; term: RewardTermSpec; value: number; where: string; count: number }>();
    model.termNames.forEach((name, t) => {
      const term = terms.get(name);
      if (!term || term.direction === 'either') return;
      const values = model.outcomeTermReward[t];
      for (let c = 0; c < model.choiceCount; c++) {
        for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
          const value = values[k];
          if (!Number.isFinite(value) || !contradicts(term.direction, value, maximize)) continue;
          const part = writtenOutcome(ctx.spec, model, c, k)?.reward.find((p) => p.term === name);
          const span = part?.span ?? choiceSpan(ctx.spec, model, c);
          const key = `${name}@${span.start}:${span.end}`;
          const known = places.get(key);
          if (known) known.count += part ? 0 : 1;
          else
            places.set(key, {
              span,
              term,
              value: part?.value ?? value,
              where: describeStep(model, c, part ? -1 : k),
              count: 1,
            });
        }
      }
    });
    for (const place of places.values()) {
      const more =
        place.count > 1
          ? ` (and in ${place.count - 1} more outcome${place.count > 2 ? 's' : ''} from the same code)`
          : '';
      ctx.report({
        message: messageFor(place.term, place.value, maximize, place.where) + more,
        span: place.span,
        related: [
          { span: place.term.span, message: `'${place.term.name}' is declared a ${place.term.direction} here` },
        ],
      });
    }
  },
};
function contradicts(direction: 'bonus' | 'penalty', value: number, maximize: boolean): boolean {
  const helps = maximize ? value > 0 : value < 0;
  const hurts = maximize ? value < 0 : value > 0;
  return direction === 'bonus' ? hurts : helps;
}

function messageFor(term: RewardTermSpec, value: number, maximize: boolean, where: string): string {
  const unit = maximize ? 'reward' : 'cost';
  const expected = term.direction === 'bonus' ? (maximize ? '>= 0' : '<= 0') : maximize ? '<= 0' : '>= 0';
  const amount = formatAmount(Math.abs(value));
  const effect =
    term.direction === 'penalty'
      ? `each time the policy takes ${where} the penalty gains it ${amount} instead of costing it`
      : `each time the policy takes ${where} the bonus loses it ${amount} instead of paying it`;
  return `reward term '${term.name}' is declared a ${term.direction} (${unit} ${expected}) but is ${formatSigned(value)} here: ${effect}`;
}
