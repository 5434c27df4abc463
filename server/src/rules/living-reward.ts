import { formatNumber } from '../load/names';
import { stateName, type CompiledModel } from '../model/compiled';
import { maximalEndComponents } from '../analysis/end-components';
import { goalRouteOf } from '../analysis/goal-route';
import { buildModelGraph } from '../analysis/graph';
import type { PathStep } from '../analysis/paths';
import {
  choiceSpan,
  describePath,
  formatAmount,
  formatSigned,
  ownerOfChoice,
  relatedOfPath,
  traceOfPath,
  valueAt,
} from './incentive-text';
import type { Rule } from './types';

export const livingReward: Rule = {
  id: 'living-reward',
  defaultSeverity: 'warning',
  summary: 'Every step of a reachable loop pays, and staying alive is worth more than the goal.',
  needs: 'analysis',
  sources: ['json', 'enumerable', 'sampled'],
  documentation: `
**What it finds.** A "living reward": every step pays something positive (an alive bonus, a small reward for
moving, a per-step survival reward), so an agent that never finishes collects reward/(1 - discount), which
can be worth more than reaching the goal. The agent learns to dawdle or avoid the goal entirely.

**When it fires.** Under \`maximize\` (under \`minimize\` the same with negative costs): some set of reachable
states can be kept forever using only actions whose every outcome pays a positive reward (an end component
of those actions), a goal is reachable from it, and the least it guarantees per step, r, makes staying worth
at least r/(1 - discount) (r times the horizon's discounted length with a \`horizon\`; infinite at discount 1)
which is more than the most direct route to a goal earns from the same state. The message shows a loop of
such steps, r, the staying value and the goal route's value.

**Fix.** Make ordinary steps cost (a small negative step reward) or pay nothing, and put the reward on
reaching the goal; if the alive bonus is wanted, make the goal's reward larger than r/(1 - discount).

**Thresholds.** None: the comparison is between two returns of the spec itself.
`.trim(),
  check(ctx) {
    const { model, analysis } = ctx;
    if (!model || !analysis) return;
    const sign = model.maximize ? 1 : -1;
    // Choices whose every outcome pays in the objective's favour and stays out of terminals.
    const paying = new Uint8Array(model.choiceCount);
    const guaranteed = new Float64Array(model.choiceCount);
    for (let c = 0; c < model.choiceCount; c++) {
      let least = Infinity;
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        if (!(model.outcomeProb[k] > 0)) continue;
        if (model.terminal[model.outcomeTarget[k]] !== 0) least = -Infinity;
        least = Math.min(least, sign * model.outcomeReward[k]);
      }
      guaranteed[c] = least;
      if (least > 0) paying[c] = 1;
    }
    const states = new Uint8Array(model.stateCount);
    for (let s = 0; s < model.stateCount; s++) states[s] = analysis.reachable[s] && model.terminal[s] === 0 ? 1 : 0;
    const ecs = maximalEndComponents(buildModelGraph(model), states, paying);
    if (ecs.count === 0) return;
    const length = discountedLength(model);
    let route: ReturnType<typeof goalRouteOf> | null = null;
    for (let i = 0; i < ecs.count; i++) {
      const members = ecs.states[i];
      // The best per-state guarantee inside the component, and the least of those over its states.
      const bestChoice = new Map<number, number>();
      for (const c of ecs.choices[i]) {
        const s = ownerOfChoice(model, c);
        const current = bestChoice.get(s);
        if (current === undefined || guaranteed[c] > guaranteed[current]) bestChoice.set(s, c);
      }
      let perStep = Infinity;
      for (const c of bestChoice.values()) perStep = Math.min(perStep, guaranteed[c]);
      // The member from which a goal is likeliest; without one, the goal is not on offer here.
      let entry = -1;
      for (const s of members)
        if (analysis.maxGoalReach[s] > 0 && (entry < 0 || analysis.maxGoalReach[s] > analysis.maxGoalReach[entry]))
          entry = s;
      if (entry < 0) continue;
      const stay = perStep * length;
      route ??= goalRouteOf(model, analysis, ctx.config.precision) ?? undefined;
      if (!route) return;
      const routeValue = sign * valueAt(route.evaluation.optimal.values, entry);
      if (!(stay > routeValue)) continue;
      const cycle = loopInside(model, entry, bestChoice, ecs.componentOf, i);
      const closed: PathStep[] = [...cycle, { state: cycle[0].state, choice: -1, outcome: -1 }];
      const staying =
        length === Infinity
          ? 'without bound (discount 1, no horizon)'
          : `at least ${formatAmount(sign * stay)} (${formatSigned(sign * perStep)} x ${formatAmount(length)} discounted steps${model.horizon !== undefined ? ` within the horizon ${model.horizon}` : `, 1/(1-${formatNumber(model.discount)})`})`;
      ctx.report({
        message:
          `every step of the loop ${describePath(model, closed)} ${model.maximize ? 'pays' : 'costs'} ${model.maximize ? 'at least' : 'at most'} ` +
          `${formatSigned(sign * perStep)}, so staying alive from '${stateName(model, entry)}' is worth ${staying}, more than the most direct ` +
          `route to a goal ${model.maximize ? 'earns' : 'costs'} from there (${formatAmount(sign * routeValue)}): the agent is paid not to finish`,
        span: choiceSpan(ctx.spec, model, cycle[0].choice),
        trace: traceOfPath(ctx.spec, model, closed),
        related: relatedOfPath(ctx.spec, model, cycle),
      });
      return;
    }
  },
};

/** Sum of discount^t over the steps an episode can last: 1/(1-discount), or the horizon's partial sum. */
function discountedLength(model: CompiledModel): number {
  const { discount, horizon } = model;
  if (horizon !== undefined) return discount === 1 ? horizon : (1 - Math.pow(discount, horizon)) / (1 - discount);
  return discount === 1 ? Infinity : 1 / (1 - discount);
}

/** A concrete loop inside the component from `entry`, along each state's best paying choice. */
function loopInside(
  model: CompiledModel,
  entry: number,
  bestChoice: Map<number, number>,
  componentOf: Int32Array,
  component: number,
): PathStep[] {
  const steps: PathStep[] = [];
  const position = new Map<number, number>();
  let s = entry;
  while (!position.has(s)) {
    position.set(s, steps.length);
    const c = bestChoice.get(s)!;
    let outcome = -1;
    for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
      if (!(model.outcomeProb[k] > 0) || componentOf[model.outcomeTarget[k]] !== component) continue;
      if (outcome < 0 || model.outcomeProb[k] > model.outcomeProb[outcome]) outcome = k;
    }
    steps.push({ state: s, choice: c, outcome });
    s = model.outcomeTarget[outcome];
  }
  return steps.slice(position.get(s));
}
