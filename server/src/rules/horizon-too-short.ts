import { TERMINAL_CODE, stateName } from '../model/compiled';
import { routeFrom, startEntries, stepsTo } from '../analysis/paths';
import { describePath, formatProbability, relatedOfPath, traceOfPath } from './incentive-text';
import type { Fix, Rule } from './types';

export const horizonTooShort: Rule = {
  id: 'horizon-too-short',
  defaultSeverity: 'warning',
  summary: 'The time limit is shorter than the shortest path from the start to every goal.',
  needs: 'model',
  sources: ['json', 'enumerable'],
  documentation: `
**What it finds.** A \`horizon\` (time limit) that cuts every episode before any goal can be reached. No
policy can succeed, every episode ends by truncation, and training sees no goal reward at all; the learner
optimises whatever step rewards remain.

**When it fires.** The spec has a \`horizon\` H, and from a start state that can reach a goal at all, the
fewest steps to enter any goal terminal exceed H. The message names the start state, the nearest goal and
its shortest route, and how much of the start distribution is affected. Start states from which no goal is
reachable are left to other rules (trap-state, unreachable-terminal).

**Fix.** Raise the horizon to at least the shortest distance (the quick fix sets it to the largest such
distance over the start states), or move the goal closer. A horizon only just above the shortest route
leaves no slack for stochastic detours, so allow a margin.

**Thresholds.** None: the comparison is exact (steps are counted along outcomes with positive probability).
`.trim(),
  check(ctx) {
    const model = ctx.model;
    const horizon = model?.horizon;
    if (!model || horizon === undefined) return;
    const goals = new Uint8Array(model.stateCount);
    for (let s = 0; s < model.stateCount; s++) if (model.terminal[s] === TERMINAL_CODE.goal) goals[s] = 1;
    if (!goals.includes(1)) return;
    const layering = stepsTo(model, goals);
    let worst = -1;
    let affected = 0;
    for (const { state, probability } of startEntries(model)) {
      const steps = layering.layer[state];
      if (steps < 1 || steps <= horizon) continue;
      affected += probability;
      if (worst < 0 || steps > layering.layer[worst]) worst = state;
    }
    if (worst < 0) return;
    const route = routeFrom(model, layering, worst);
    const needed = layering.layer[worst];
    const goal = stateName(model, route[route.length - 1].state);
    const span = ctx.spec.horizon?.span ?? ctx.spec.rootSpan;
    const fixes: Fix[] =
      ctx.spec.horizon && /^\s*\d+\s*$/.test(ctx.text.slice(span.start, span.end))
        ? [{ title: `Raise the horizon to ${needed}`, edits: [{ span, newText: String(needed) }] }]
        : [];
    const share =
      affected >= 1 - 1e-12 ? 'every episode' : `${formatProbability(affected)} of episodes (by start probability)`;
    ctx.report({
      message:
        `the horizon ${horizon} cuts ${share} before any goal can be reached: from '${stateName(model, worst)}' the nearest goal, ` +
        `'${goal}', is ${needed} steps away (${describePath(model, route)}), so no policy reaches it in time ` +
        `and those episodes earn no goal reward`,
      span,
      trace: traceOfPath(ctx.spec, model, route),
      related: relatedOfPath(ctx.spec, model, route, undefined, 10),
      fixes,
    });
  },
};
