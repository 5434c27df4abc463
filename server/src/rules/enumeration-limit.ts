import type { Rule } from './types';

export const enumerationLimit: Rule = {
  id: 'enumeration-limit',
  defaultSeverity: 'warning',
  summary: 'Enumeration of a TypeScript model stopped at the state cap.',
  needs: 'spec',
  sources: ['enumerable'],
  documentation: `
**What it finds.** An enumerable TypeScript model (one with \`outcomes\`) that reaches more states from its
start than the state cap allows (\`stateCap\` in \`episcope.config.json\`, default 200,000; the editor's
setting \`episcope.stateCap\`). The message shows the first state that did not fit.

**Why it matters.** Exact values need every reachable state. Past the cap Episcope stops the enumeration,
computes no exact values, and falls back to seeded rollouts of the model (sampling \`outcomes\` by their
probabilities under the uniformly random policy), whose figures are estimates with confidence intervals.

**Fix.** Raise the cap if the model is finite and fits in memory (the worker's heap limit is the
\`model-error.memoryMb\` threshold). If the state space is unbounded, the state probably carries a
quantity that grows without limit (a step counter without a horizon, an unbounded queue or stock): bound it,
bucket continuous quantities, or add a \`horizon\` and keep time out of the state.
`.trim(),
  check(ctx) {
    const enumeration = ctx.spec.typescript?.enumeration;
    if (!enumeration?.capped) return;
    const beyond = enumeration.firstBeyondCap ? `, e.g. ${enumeration.firstBeyondCap}` : '';
    const fallback = ctx.spec.typescript?.rollouts ? '; the figures shown are sampled estimates' : '';
    ctx.report({
      message:
        `enumeration stopped at the state cap of ${enumeration.cap} states: more states are reachable from the start${beyond}; ` +
        `no exact values were computed${fallback}. Raise stateCap, or bound the quantities that grow in the state`,
      span: enumeration.span,
    });
  },
};
