import { TERMINAL_CODE, stateName } from '../model/compiled';
import { goalRouteOf } from '../analysis/goal-route';
import { likeliestPathTo } from '../analysis/policy-loops';
import {
  describePath,
  formatAmount,
  formatProbability,
  midpoint,
  outcomeSpan,
  relatedOfPath,
  traceOfPath,
} from './incentive-text';
import type { Rule } from './types';

export const failurePreferred: Rule = {
  id: 'failure-preferred',
  defaultSeverity: 'warning',
  summary: 'The optimal policy gives up achievable goal probability to end in a failure terminal.',
  needs: 'analysis',
  sources: ['json', 'enumerable', 'sampled'],
  thresholds: {
    probabilityGap: {
      default: 0.2,
      description:
        'How much achievable goal probability the optimal policy must give up, and how much more often it must ' +
        'end in failure than the most direct route to a goal, before the rule fires. 0.2 (one episode in five) ' +
        'is well above the slips of typical stochastic specs, so a finding means the rewards prefer failing, ' +
        'not that the task is risky. Lower it for safety-relevant failures.',
    },
  },
  documentation: `
**What it finds.** Rewards under which giving up pays: the step costs on the way to the goal add up to more
than the penalty for failing, so the optimal policy heads for a failure terminal (a crash, a fall, a
time-out) to stop paying. RL agents find this quickly: "jump off the ledge to end the step penalty".

**When it fires.** The optimal policy's goal probability from the start is lower than the best achievable
one by at least \`probabilityGap\` (default 0.2), and it ends in a failure terminal more often than the most
direct route to a goal does (a policy reaching a goal with the best achievable probability) by at least the
same amount. The message compares the two returns from the start ("failing returns -2.0; the route to the
goal returns -9.5") and shows the optimal policy's most likely path into the failure.

**Fix.** Make failing cost more than the longest reasonable route to the goal (in discounted terms), reduce
the step cost, or give the goal a bonus that outweighs the route's costs.
`.trim(),
  check(ctx) {
    const { model, analysis } = ctx;
    if (!model || !analysis || !analysis.optimal.policy) return;
    const gap = ctx.threshold('probabilityGap');
    const best = analysis.start.maxGoalReach;
    const optimalReach = analysis.start.reach.optimal;
    if (!(best - optimalReach.goal >= gap) || !(optimalReach.failure >= gap)) return;
    const route = goalRouteOf(model, analysis, ctx.config.precision);
    if (!route) return;
    const routeReach = route.evaluation.start.reach.optimal;
    if (!(optimalReach.failure - routeReach.failure >= gap)) return;
    const path = likeliestPathTo(model, analysis.optimal.policy, TERMINAL_CODE.failure);
    if (path.length < 2) return;
    const last = path[path.length - 2];
    const failure = stateName(model, path[path.length - 1].state);
    const optimal = midpoint(analysis.start.optimal);
    const routeValue = midpoint(route.evaluation.start.optimal);
    const returns = model.maximize ? 'returns' : 'costs';
    ctx.report({
      message:
        `the optimal policy ends in failure with probability ${formatProbability(optimalReach.failure)} and reaches a goal with ` +
        `${formatProbability(optimalReach.goal)}, although ${formatProbability(best)} is achievable: failing ${returns} ` +
        `${formatAmount(optimal)} from the start, while the most direct route to a goal ${returns} ${formatAmount(routeValue)} ` +
        `(failure ${formatProbability(routeReach.failure)}); likeliest way into '${failure}': ${describePath(model, path)}`,
      span: last ? outcomeSpan(ctx.spec, model, last.choice, last.outcome) : model.stateSpan[path[0].state],
      trace: traceOfPath(ctx.spec, model, path),
      related: relatedOfPath(ctx.spec, model, path),
    });
  },
};
