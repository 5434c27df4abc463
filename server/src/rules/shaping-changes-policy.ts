import { stateName } from '../model/compiled';
import { compareShapedPolicies } from '../analysis/compare-policies';
import { hasShaping, shapingTermIndices, unshapedReward } from '../analysis/shaping';
import { actionOf, choiceSpan, formatBounds } from './incentive-text';
import type { RelatedLocation, Rule } from './types';

export const shapingChangesPolicy: Rule = {
  id: 'shaping-changes-policy',
  defaultSeverity: 'warning',
  summary: 'The optimal policy with shaping differs from the one without it.',
  needs: 'analysis',
  sources: ['json', 'enumerable'],
  documentation: `
**What it finds.** Shaping is meant to speed learning up, not to change what is learned. This rule solves
the spec twice, with the full reward and with the shaping removed (the terms marked \`shaping\` and the
\`shaping.potential\` reward), and compares the optimal actions state by state. Differences come from shaping
that is not potential-based (see shaping-not-potential), from a non-zero potential on a terminal (see
terminal-potential; Grzes, 2017), and, with a \`horizon\`, from truncation: the potential of the state where
the episode is cut is never paid back.

**When it fires.** At some reachable state an action is optimal under one reward while the value bounds
prove it worse than the best action under the other (near-ties within the analysis precision never count).
With a horizon the comparison is made for every number of steps left at which some policy can be in the
state. The message lists the states with both actions, their Q values under the unshaped reward, and how
much unshaped return the shaped optimum gives up from the start.

**Fix.** Derive the shaping from a potential with Phi = 0 on terminals (\`shaping.potential\`), or correct the
terms that shaping-not-potential points at. With a horizon, keep the potential small near where episodes
are cut, or accept that the shaped task is a different task.

**Thresholds.** None: differences are decided by the sound value bounds at the configured precision.
`.trim(),
  check(ctx) {
    const { model, analysis } = ctx;
    if (!model || !analysis || !hasShaping(ctx.spec, model)) return;
    const comparison = compareShapedPolicies(model, analysis, unshapedReward(ctx.spec, model), ctx.config.precision);
    const first = comparison.differences[0];
    if (!first) return;
    const describe = (d: (typeof comparison.differences)[number]) => {
      const when = d.stepsLeft !== undefined ? ` with ${d.stepsLeft} steps left` : '';
      return (
        `at '${stateName(model, d.state)}'${when} the shaped optimum takes '${actionOf(model, d.shapedChoice)}' ` +
        `(unshaped Q ${formatBounds(d.plainQ.shaped)}) where the unshaped optimum takes '${actionOf(model, d.plainChoice)}' ` +
        `(unshaped Q ${formatBounds(d.plainQ.plain)})`
      );
    };
    const others = comparison.differences.slice(1, 4).map((d) => `'${stateName(model, d.state)}'`);
    const more = comparison.differingStates - 1 - others.length;
    const elsewhere =
      others.length > 0 ? `; it also differs at ${others.join(', ')}${more > 0 ? ` and ${more} more states` : ''}` : '';
    const verb = model.maximize ? 'earns' : 'costs';
    // An undefined total (bounds -inf to inf) is said in words, never printed as a figure.
    const amount = (interval: { lower: number; upper: number }) => {
      const text = formatBounds(interval);
      return text === 'undetermined' ? `an undetermined amount` : text;
    };
    const cost =
      comparison.shapedPolicyPlainReturn !== undefined && comparison.plainOptimalReturn !== undefined
        ? `; following the shaped optimum ${verb} ${amount(comparison.shapedPolicyPlainReturn)} of the ` +
          `unshaped reward from the start, where the unshaped optimum ${verb} ${amount(comparison.plainOptimalReturn)}`
        : '';
    const sources = shapingSources(ctx);
    ctx.report({
      message:
        `the shaping changes the optimal policy at ${comparison.differingStates} reachable state${comparison.differingStates === 1 ? '' : 's'}: ` +
        `${describe(first)}${elsewhere}${cost}`,
      span: choiceSpan(ctx.spec, model, first.shapedChoice),
      related: [
        {
          span: choiceSpan(ctx.spec, model, first.plainChoice),
          message: `best without shaping: '${actionOf(model, first.plainChoice)}'`,
        },
        ...comparison.differences
          .slice(1)
          .map((d) => ({ span: choiceSpan(ctx.spec, model, d.shapedChoice), message: describe(d) })),
        ...sources,
      ],
    });
  },
};

/** Where the shaping is declared: the potential, and the terms marked `shaping`. */
function shapingSources(ctx: Parameters<Rule['check']>[0]): RelatedLocation[] {
  const related: RelatedLocation[] = [];
  if (ctx.spec.shapingSpan) related.push({ span: ctx.spec.shapingSpan, message: 'the shaping potential' });
  const marked = new Set(shapingTermIndices(ctx.spec, ctx.model!).map((i) => ctx.model!.termNames[i]));
  for (const term of ctx.spec.rewardTerms) {
    if (marked.has(term.name)) related.push({ span: term.span, message: `'${term.name}' is marked as shaping` });
  }
  return related;
}
