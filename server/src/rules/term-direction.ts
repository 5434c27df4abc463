import type { RewardTermSpec } from '../spec/types';
import { formatAmount, formatSigned } from './incentive-text';
import type { Rule } from './types';

/**
 * A reward term declared a `bonus` must never cost, and a `penalty` must never pay. A sign slip in
 * one transition turns a penalty into something the policy seeks out.
 */
export const termDirection: Rule = {
  id: 'term-direction',
  defaultSeverity: 'warning',
  summary: 'A reward term declared `bonus` takes a value against the objective, or a `penalty` one in its favour.',
  needs: 'spec',
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
    const terms = new Map<string, RewardTermSpec>(ctx.spec.rewardTerms.map((t) => [t.name, t]));
    const maximize = ctx.spec.objective !== 'minimize';
    const seen = new Set<string>();
    for (const transition of ctx.spec.transitions) {
      for (const outcome of transition.outcomes) {
        for (const part of outcome.reward) {
          if (part.term === null) continue;
          const term = terms.get(part.term);
          if (!term || term.direction === 'either' || !Number.isFinite(part.value)) continue;
          if (!contradicts(term.direction, part.value, maximize)) continue;
          // Transitions whose `from` or `action` is an array share their reward text; report it once.
          const key = `${part.term}@${part.span.start}:${part.span.end}`;
          if (seen.has(key)) continue;
          seen.add(key);
          ctx.report({
            message: messageFor(term, part.value, maximize, `${transition.from} --${transition.action}-->`),
            span: part.span,
            related: [{ span: term.span, message: `'${term.name}' is declared a ${term.direction} here` }],
          });
        }
      }
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
