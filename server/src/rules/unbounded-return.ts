import { expectedRewards, graphOf } from '../analysis/graph';
import { loopOf, routeFromStart } from '../analysis/loops';
import { stateName } from '../model/compiled';
import { quote } from '../load/names';
import { describeStep, formatAmount, formatSigned, outcomeSpan, stateSpan, traceOfPath } from './incentive-text';
import { formatInterval } from './trap-state';
import type { RelatedLocation, Rule } from './types';

/** Discount 1, no horizon, and a reachable loop that earns without bound in the optimiser's favour. */
export const unboundedReturn: Rule = {
  id: 'unbounded-return',
  defaultSeverity: 'error',
  summary: 'With discount 1 and no horizon, a reachable loop lets the optimal return grow without bound.',
  needs: 'analysis',
  sources: ['json', 'enumerable', 'sampled'],
  documentation: `
**Why it matters.** With discount 1 and no time limit the return is the plain sum of rewards. If
the agent can circle a loop that pays something positive on average every round (under
\`"maximize"\`; under \`"minimize"\`, a loop of negative cost), the best return is infinite: the
optimal policy farms the loop forever and never finishes the task. Learners chase the loop,
value estimates diverge, and every comparison between policies becomes meaningless.

**When it fires.** The spec has discount 1 and no \`horizon\`, and a reachable end component (a
set of states and actions a policy can keep circling forever) has a best long-run mean reward
per step above 0 under maximize (below 0 under minimize). The sign is decided exactly where the
component's rewards have one sign, and by sound bounds on the mean otherwise (see the analysis
notes). The message shows one round of the loop, state by state with the actions, and what a
round earns; the trace leads from the start to the loop.

**How to fix.** Make a round cost something (a step penalty larger than what the loop pays), end
the episode on the loop (a terminal), pay the bonus only once (move it into the transition that
completes the task), set a discount below 1, or set a \`horizon\`.

**Example.**
\`\`\`jsonc
"discount": 1,
"transitions": [
  { "from": "dock", "action": "scan", "to": "shelf", "reward": 1 },   // a bonus for scanning...
  { "from": "shelf", "action": "back", "to": "dock", "reward": 0 }    // ...that can be earned again and again
]
\`\`\`
`.trim(),
  check(ctx) {
    const { model, analysis } = ctx;
    if (!model || !analysis || model.discount !== 1 || model.horizon !== undefined) return;
    const favourable = model.maximize ? 1 : -1;
    const graph = graphOf(model);
    const reward = expectedRewards(model);
    for (const component of analysis.endComponents) {
      if (component.gainSign !== favourable || !component.gainPolicy) continue;
      if (!component.states.some((s) => analysis.reachable[s])) continue;
      const inside = new Uint8Array(model.stateCount);
      const policyOf = new Map<number, number>();
      component.states.forEach((s, i) => {
        inside[s] = 1;
        policyOf.set(s, component.gainPolicy![i]);
      });
      const route = routeFromStart(graph, inside);
      const entry = route.length > 0 ? route[route.length - 1].state : component.states[0];
      const found = loopOf(model, (s) => policyOf.get(s) ?? -1, entry, inside);
      if (!found) continue;
      const loop = found.walk.slice(found.cycleStart);
      const steps = loop.slice(0, -1);
      let perRound = 0;
      for (const step of steps) perRound += reward[step.choice];
      const shown = steps
        .map(
          (step) => `${quote(stateName(model, step.state))} --${model.actionNames[model.choiceAction[step.choice]]}-->`,
        )
        .join(' ');
      const round = `${shown} ${quote(stateName(model, loop[loop.length - 1].state))}`;
      const length = `${steps.length} step${steps.length === 1 ? '' : 's'}`;
      const pays = model.maximize ? 'earns' : 'costs';
      const stochastic = steps.some(
        (step) => model.outcomeStart[step.choice + 1] - model.outcomeStart[step.choice] > 1,
      );
      const earning =
        Math.sign(perRound) === favourable
          ? `${pays} ${formatSigned(perRound)} per round (${length}${stochastic ? ', on average' : ''})`
          : `${pays} ${formatAmount(component.gain ? (model.maximize ? component.gain.lower : component.gain.upper) : perRound)} per step in the long run`;
      const start = analysis.start.optimal;
      const infinite = model.maximize ? '+infinity' : '-infinity';
      const atStart =
        start.lower === start.upper && !Number.isFinite(start.lower)
          ? `so the optimal return from the start is ${infinite}`
          : `so the optimal return is ${infinite} from the states that reach it safely (from the start it is ${formatInterval(start.lower, start.upper)})`;
      const related: RelatedLocation[] = steps.slice(0, 20).map((step) => ({
        span: outcomeSpan(ctx.spec, model, step.choice, step.outcome),
        message: `${describeStep(model, step.choice, step.outcome)} pays ${formatSigned(model.outcomeReward[step.outcome])}`,
      }));
      const first = steps[0];
      ctx.report({
        message:
          `the optimal return is unbounded (discount 1, no horizon): the loop ${round} ${earning} and a policy can repeat it forever, ${atStart}; ` +
          `make a round cost something, end the episode on the loop, lower the discount or set a horizon`,
        span:
          first.choice >= 0
            ? outcomeSpan(ctx.spec, model, first.choice, first.outcome)
            : stateSpan(ctx.spec, model, entry),
        trace: traceOfPath(ctx.spec, model, [...route.slice(0, -1), ...found.walk]),
        related,
      });
    }
  },
};
