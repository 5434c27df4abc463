import { formatNumber } from '../load/names';
import { TERMINAL_CODE, stateName } from '../model/compiled';
import { routeFrom, startEntries, stepsTo } from '../analysis/paths';
import { unshapedReward } from '../analysis/shaping';
import { describePath, formatAmount, formatSigned, outcomeSpan, relatedOfPath, traceOfPath } from './incentive-text';
import type { Rule } from './types';

export const goalDiscountedAway: Rule = {
  id: 'goal-discounted-away',
  defaultSeverity: 'warning',
  summary: "The goal's discounted reward seen from the start is a negligible part of its size.",
  needs: 'model',
  sources: ['json', 'enumerable'],
  thresholds: {
    share: {
      default: 1e-3,
      description:
        'The fraction discount^(steps-1) of the goal reward that is still visible from the start. Below 1e-3 ' +
        'the goal contributes less than a tenth of a percent of its size to the start value, which is smaller ' +
        'than the noise of typical value estimates and of step rewards, so a learner cannot tell reaching the ' +
        'goal from not reaching it. Equivalently, the shortest route is about 7 effective horizons long ' +
        '(e^-7 ~ 1e-3).',
    },
  },
  documentation: `
**What it finds.** A discount that makes the goal invisible. A reward received after n steps is worth
discount^(n-1) of its size at the start; with discount 0.9, a goal 70 steps away is worth 0.06% of its
reward. The effective horizon 1/(1 - discount) is a rough measure of how far ahead the agent looks; when the
goal lies many effective horizons away, every policy looks about equally good from the start and learning
stalls or settles for nearby rewards.

**When it fires.** discount < 1, some goal terminal is entered with a reward in the objective's favour
(positive under maximize, negative cost under minimize; shaping left out), and the fewest steps from the
start to such an entry give discount^(steps-1) below the \`share\` threshold (default 1e-3), averaged over
the start distribution. Goals that no path reaches are left to unreachable-terminal.

**Fix.** Raise the discount so that 1/(1 - discount) is comparable to the distance (0.99 looks about 100
steps ahead, 0.999 about 1000), or give intermediate rewards through potential-based shaping
(\`shaping.potential\`), which keeps the optimal policy unchanged.
`.trim(),
  check(ctx) {
    const model = ctx.model;
    if (!model || !(model.discount < 1)) return;
    const reward = unshapedReward(ctx.spec, model);
    const sign = model.maximize ? 1 : -1;
    // Goals entered with a reward in the objective's favour (their best entry counts as their size).
    const rewarding = new Uint8Array(model.stateCount);
    for (let k = 0; k < model.outcomeCount; k++) {
      const t = model.outcomeTarget[k];
      if (model.terminal[t] === TERMINAL_CODE.goal && model.outcomeProb[k] > 0 && sign * reward[k] > 0)
        rewarding[t] = 1;
    }
    if (!rewarding.includes(1)) return;
    const layering = stepsTo(model, rewarding);
    // The share of the nearest rewarding goal that survives discounting, averaged over the start.
    let share = 0;
    let mass = 0;
    let nearest = -1;
    let nearestProbability = -1;
    for (const { state, probability } of startEntries(model)) {
      const steps = layering.layer[state];
      if (steps < 1) continue;
      share += probability * Math.pow(model.discount, steps - 1);
      mass += probability;
      if (probability > nearestProbability) {
        nearest = state;
        nearestProbability = probability;
      }
    }
    if (nearest < 0) return;
    share /= mass;
    const threshold = ctx.threshold('share');
    if (!(share < threshold)) return;
    const route = routeFrom(model, layering, nearest);
    const last = route[route.length - 2];
    const size = reward[last.outcome];
    const steps = layering.layer[nearest];
    const goal = stateName(model, model.outcomeTarget[last.outcome]);
    const horizon = 1 / (1 - model.discount);
    const discountText = formatNumber(model.discount);
    const span = ctx.spec.discount?.span ?? outcomeSpan(ctx.spec, model, last.choice, last.outcome);
    ctx.report({
      message:
        `goal '${goal}' ${model.maximize ? 'pays' : 'costs'} ${formatSigned(size)} on entry, but the shortest route from ` +
        `'${stateName(model, nearest)}' takes ${steps} steps and the discount ${discountText} keeps ` +
        `${discountText}^${steps - 1} = ${formatAmount(Math.pow(model.discount, steps - 1))} of it: seen from the start the goal is worth ` +
        `${formatSigned(size * Math.pow(model.discount, steps - 1))}, below ${formatAmount(threshold)} of its size ` +
        `(effective horizon 1/(1-${discountText}) = ${formatAmount(horizon)} steps against a distance of ${steps}); ` +
        `route: ${describePath(model, route)}`,
      span,
      trace: traceOfPath(ctx.spec, model, route),
      related: [
        {
          span: outcomeSpan(ctx.spec, model, last.choice, last.outcome),
          message: `entering '${goal}' ${model.maximize ? 'pays' : 'costs'} ${formatSigned(size)}`,
        },
        ...relatedOfPath(ctx.spec, model, route.slice(0, -2), (k) => reward[k], 10),
      ],
    });
  },
};
