import { formatNumber, quote } from '../load/names';
import { describeStep, forEachRewardAmount, type RewardAmount } from './incentive-text';
import { transitionLabel } from './spec-walk';
import type { FindingInput, Rule } from './types';

/** Rewards on very different scales, or very large ones, make learning harder than it needs to be. */
export const rewardScale: Rule = {
  id: 'reward-scale',
  defaultSeverity: 'info',
  summary: 'Rewards span more than 1e4 in magnitude, or exceed 1e3.',
  needs: 'graph',
  sources: ['json', 'enumerable'],
  thresholds: {
    maxMagnitude: {
      default: 1e3,
      description:
        'Rewards larger than this in magnitude are reported. Common practice in deep RL is to keep per-step rewards of order 1 (clipping or scaling them), because value targets grow with the reward and large targets destabilise gradient steps; 1e3 leaves ample room for terminal bonuses of order 10-100.',
    },
    maxRatio: {
      default: 1e4,
      description:
        'The largest non-zero reward magnitude divided by the smallest; above this the spec is reported. A ratio of 1e4 puts the smallest reward below the noise of a value estimate that is accurate to 0.01% of the largest, which is already finer than learned value functions usually get (common practice).',
    },
  },
  documentation: `
**Why it matters.** Learners are tuned to a reward scale: learning rates, value-network outputs,
entropy bonuses and advantage normalisation all assume rewards of a similar size. A reward of
5000 next to step costs of 0.01 makes the step costs invisible next to the noise of the value
estimates, and very large rewards inflate value targets and gradients. Scaling every reward by the
same positive factor does not change which policy is optimal, so rescaling is free.

**When it fires.** Some reward (or reward term) value is larger in magnitude than
\`maxMagnitude\` (default 1e3), or the largest non-zero magnitude is more than \`maxRatio\`
(default 1e4) times the smallest. One finding per spec, at the largest reward, with the smallest
as a related location. Thresholds are set in the config as \`"reward-scale.maxMagnitude"\` and
\`"reward-scale.maxRatio"\`.

**How to fix.** Divide all rewards by a common factor, and reconsider rewards that differ by many
orders of magnitude: a tiny term may be dead weight, and a huge one may dominate every decision.

**Example.**
\`\`\`jsonc
{ "from": "aisle", "action": "step", "to": "aisle", "reward": -0.001 },
{ "from": "aisle", "action": "dock", "to": "dock", "reward": 50000 }   // exceeds 1e3; ratio 5e7
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    const model = ctx.model;
    if (!model) return;
    const maxMagnitude = ctx.threshold('maxMagnitude');
    const maxRatio = ctx.threshold('maxRatio');
    let largest: RewardAmount | undefined;
    let smallest: RewardAmount | undefined;
    forEachRewardAmount(spec, model, (amount) => {
      const size = Math.abs(amount.value);
      if (!Number.isFinite(size) || size === 0) return;
      if (!largest || size > Math.abs(largest.value)) largest = amount;
      if (!smallest || size < Math.abs(smallest.value)) smallest = amount;
    });
    if (!largest || !smallest) return;
    const top = Math.abs(largest.value);
    const bottom = Math.abs(smallest.value);
    const ratio = top / bottom;
    const tooLarge = top > maxMagnitude;
    const tooWide = ratio > maxRatio;
    if (!tooLarge && !tooWide) return;

    const unit = spec.objective === 'minimize' ? 'cost' : 'reward';
    const where = (place: RewardAmount): string => {
      const transition = spec.transitions[model.choiceTransition[place.choice]];
      const step = transition ? transitionLabel(spec, transition) : describeStep(model, place.choice, place.outcome);
      return `${step}${place.term !== null ? ` term ${quote(place.term)}` : ''}`;
    };
    const problems: string[] = [];
    if (tooLarge)
      problems.push(
        `the ${unit} ${formatNumber(largest.value)} of ${where(largest)} exceeds ${formatNumber(maxMagnitude)} in magnitude`,
      );
    if (tooWide)
      problems.push(
        `${unit}s span a factor of ${formatNumber(ratio)} in magnitude, from ${formatNumber(smallest.value)} (${where(smallest)}) to ${formatNumber(largest.value)}, more than ${formatNumber(maxRatio)}`,
      );
    const finding: FindingInput = {
      message:
        `${problems.join('; ')}: learners tuned to one scale treat the smallest ${unit}s as noise and large value targets destabilise training; ` +
        `dividing every ${unit} by the same positive factor keeps the optimal policy`,
      span: largest.span,
    };
    if (tooWide)
      finding.related = [
        { span: smallest.span, message: `the smallest non-zero ${unit}, ${formatNumber(smallest.value)}` },
      ];
    ctx.report(finding);
  },
};
