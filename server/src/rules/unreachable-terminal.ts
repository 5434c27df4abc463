import { graphOf } from '../analysis/graph';
import { reachableFromStart } from '../analysis/reachability';
import { stateName, TERMINAL_OF_CODE } from '../model/compiled';
import { quote } from '../load/names';
import { describeStep, formatSigned, incompleteNote, outcomeSpan, stateSpan } from './incentive-text';
import type { CompiledModel } from '../model/compiled';
import type { RelatedLocation, Rule, RuleContext } from './types';

/** A declared terminal that no policy reaches from the start. */
export const unreachableTerminal: Rule = {
  id: 'unreachable-terminal',
  defaultSeverity: 'warning',
  summary: 'A declared terminal that no policy reaches from the start.',
  needs: 'graph',
  sources: ['json', 'sampled'],
  documentation: `
**Why it matters.** Terminals are where episodes end and, usually, where the big rewards and
penalties are paid: the goal's bonus, the crash's penalty. A terminal no policy can reach never
ends an episode and its rewards never count, so the agent is trained as if it did not exist.
An unreachable goal usually means a broken route (a wrong \`to\`, a missing action); an
unreachable failure means a hazard the spec meant to model has no effect.

**When it fires.** A state declared with \`"terminal"\` is not reachable from any start state
along outcomes of positive probability, whatever the actions.

**How to fix.** Add or repair the transition that should lead into it, or remove the terminal if
it is obsolete.

**Example.**
\`\`\`jsonc
"states": { "aisle": {}, "shelf": { "terminal": "goal" } },
"transitions": [ { "from": "aisle", "action": "reach", "to": "aisle", "reward": -1 } ]   // nothing enters 'shelf'
\`\`\`
`.trim(),
  check(ctx) {
    const model = ctx.model;
    if (!model || model.startState.length === 0) return;
    if (model.samples) {
      checkSampledKinds(ctx, model);
      return;
    }
    const reachable = ctx.analysis?.reachable ?? reachableFromStart(model);
    const graph = graphOf(model);
    const kindReachable = new Set<string>();
    for (let s = 0; s < model.stateCount; s++)
      if (reachable[s] && model.terminal[s] !== 0) kindReachable.add(TERMINAL_OF_CODE[model.terminal[s]]!);

    for (let s = 0; s < model.stateCount; s++) {
      if (reachable[s] || model.terminal[s] === 0) continue;
      const kind = TERMINAL_OF_CODE[model.terminal[s]]!;
      // What entering it would pay, over the (unreachable) transitions that lead into it.
      const related: RelatedLocation[] = [];
      let low = Infinity;
      let high = -Infinity;
      for (let i = graph.predStart[s]; i < graph.predStart[s + 1]; i++) {
        const c = graph.predChoice[i];
        for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
          if (model.outcomeTarget[k] !== s || !(model.outcomeProb[k] > 0)) continue;
          low = Math.min(low, model.outcomeReward[k]);
          high = Math.max(high, model.outcomeReward[k]);
          if (related.length < 10) {
            related.push({
              span: outcomeSpan(ctx.spec, model, c, k),
              message: `${describeStep(model, c, k)} leads here but is itself never reached`,
            });
          }
        }
      }
      let cost: string;
      if (low === Infinity) cost = 'no transition leads into it';
      else {
        const pays = low === high ? formatSigned(low) : `${formatSigned(low)} to ${formatSigned(high)}`;
        cost = `the ${pays} for entering it never counts toward any return`;
      }
      const consequence =
        kind === 'goal' && !kindReachable.has('goal')
          ? '; no goal is reachable at all, so every episode ends elsewhere or never'
          : kind === 'failure' && !kindReachable.has('failure')
            ? '; no failure is reachable, so the hazard it stands for has no effect on the agent'
            : '';
      ctx.report({
        message: `terminal ${quote(stateName(model, s))} (${kind}) is never reached from the start: ${cost}${consequence}${incompleteNote(ctx.incomplete)}`,
        span: stateSpan(ctx.spec, model, s),
        related,
      });
    }
  },
};

/**
 * On the empirical model of a sampled model: a terminal kind the model code names that no sampled
 * transition entered. A warning when the exploration tried every state it saw with every action
 * (an entry of probability p from some tried pair is then missed with probability at most (1-p)^tries),
 * info when it did not.
 */
function checkSampledKinds(ctx: RuleContext, model: CompiledModel): void {
  const samples = model.samples!;
  for (const code of [...samples.declaredKinds].sort()) {
    if (samples.reachedKinds.has(code)) continue;
    const kind = TERMINAL_OF_CODE[code]!;
    const effort = `${samples.episodes} rollout episodes and ${samples.exploreSamples} exploration samples`;
    const confidence = samples.complete
      ? `although every one of the ${model.stateCount} state keys seen was tried at least ${samples.tries} times with each action`
      : 'and the exploration budget ran out before every state key seen was tried, so it may lie beyond what was sampled';
    ctx.report({
      message: `the model code names the terminal kind "${kind}", but none of ${effort} ended in it, ${confidence}: its rewards never count toward any sampled return`,
      span: model.stateSpan[0],
      severity: samples.complete ? 'warning' : 'info',
    });
  }
}
