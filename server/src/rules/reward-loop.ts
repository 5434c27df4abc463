import { goalRouteOf } from '../analysis/goal-route';
import { policyLoop } from '../analysis/policy-loops';
import type { PathStep } from '../analysis/paths';
import {
  choiceSpan,
  describePath,
  formatAmount,
  formatProbability,
  formatSigned,
  midpoint,
  relatedOfPath,
  traceOfPath,
} from './incentive-text';
import type { Rule } from './types';

export const rewardLoop: Rule = {
  id: 'reward-loop',
  defaultSeverity: 'warning',
  summary: 'The optimal policy circles a loop instead of ending the episode at a reachable goal.',
  needs: 'analysis',
  sources: ['json', 'enumerable', 'sampled'],
  thresholds: {
    probabilityGap: {
      default: 0.2,
      description:
        "How much lower than the best achievable goal probability the optimal policy's probability of ending " +
        'the episode must be. 0.2 means at least one episode in five that could reach a goal circles instead: ' +
        'far more than stochastic slips in typical specs, so a finding is a change of behaviour, not noise. ' +
        'Lower it (for example to 0.05) for specs where rare loops matter.',
    },
  },
  documentation: `
**What it finds.** Reward farming: a loop of states whose rewards add up to more than finishing the task, so
the optimal policy circles it and never (or rarely) ends the episode, although a goal is within reach. It is
the classic bug of a bonus paid for something that can be repeated: touching a checkpoint, re-entering a
zone, picking up and dropping an item.

**When it fires.** A goal is reachable from the start, and the optimal policy's probability of ending the
episode at all is lower than the best achievable goal probability by at least \`probabilityGap\` (default 0.2)
because the policy keeps circling. The message shows the loop state by state with what it earns per lap, the
optimal return from the start (what the loop earns), and what the most direct route to a goal earns (a policy
that reaches a goal with the best achievable probability, going as directly as the graph allows). When the
loop's return is infinite (discount 1 without a horizon), unbounded-return reports it instead.

**Fix.** Pay the bonus once (track it in the state), make the loop cost something, pay progress as
potential-based shaping (\`shaping.potential\`), or move the reward to entering the goal.
`.trim(),
  check(ctx) {
    const { model, analysis } = ctx;
    if (!model || !analysis) return;
    const best = analysis.start.maxGoalReach;
    const ends = 1 - analysis.start.reach.optimal.none;
    const gap = ctx.threshold('probabilityGap');
    if (!(best > 0) || !(best - ends >= gap)) return;
    const optimal = midpoint(analysis.start.optimal);
    // An infinite return is unbounded-return's finding, with the same loop.
    if (!Number.isFinite(optimal) || !analysis.optimal.policy) return;
    const loop = policyLoop(model, analysis.optimal.policy);
    if (!loop || loop.cycle.length === 0) return;
    const route = goalRouteOf(model, analysis, ctx.config.precision);
    const routeValue = route ? midpoint(route.evaluation.start.optimal) : NaN;
    const lap = loop.cycle.reduce((sum, step) => sum + model.outcomeReward[step.outcome], 0);
    const cycleClosed: PathStep[] = [...loop.cycle, { state: loop.cycle[0].state, choice: -1, outcome: -1 }];
    // The step that pays most is the likeliest culprit: the finding points at it.
    const sign = model.maximize ? 1 : -1;
    let culprit = loop.cycle[0];
    for (const step of loop.cycle)
      if (sign * model.outcomeReward[step.outcome] > sign * model.outcomeReward[culprit.outcome]) culprit = step;
    const routeText = Number.isFinite(routeValue)
      ? `the most direct route to a goal ${model.maximize ? 'earns' : 'costs'} ${formatAmount(routeValue)} (goal reached with ${formatProbability(route!.evaluation.start.reach.optimal.goal)})`
      : 'no route to a goal has a finite return';
    ctx.report({
      message:
        `the optimal policy circles the loop ${describePath(model, cycleClosed)} (${formatSigned(lap)} per lap) instead of ending the episode: ` +
        `it ends with probability ${formatProbability(ends)} although a goal can be reached with ${formatProbability(best)}; ` +
        `the loop ${model.maximize ? 'earns' : 'costs'} ${formatAmount(optimal)} from the start, ${routeText}`,
      span: choiceSpan(ctx.spec, model, culprit.choice),
      trace: traceOfPath(ctx.spec, model, [...loop.approach.slice(0, -1), ...cycleClosed]),
      related: relatedOfPath(ctx.spec, model, loop.cycle),
    });
  },
};
