import type { Rule } from './types';

export const nondeterministicModel: Rule = {
  id: 'nondeterministic-model',
  defaultSeverity: 'error',
  summary: 'The same state and action gave different outcome lists, or the same seed gave different trajectories.',
  needs: 'spec',
  sources: ['enumerable', 'sampled'],
  documentation: `
**What it finds.** Model code whose answers are not a function of its inputs. For an enumerable model,
Episcope calls \`actions\` and \`outcomes\` a second time on up to 200 states spread over the enumeration and
compares the answers; for a sampled model, it replays the first 16 episodes with the same seed and compares
the trajectories (states, actions and rewards).

**Why it matters.** Exact analysis assumes that \`outcomes(state, action)\` is the distribution of the next
state: if it changes between calls, the enumerated MDP is one arbitrary draw, and every value computed from
it is wrong. A sampled model that does not replay from its seed cannot be debugged, and its confidence
intervals do not describe one model.

**Usual causes.** \`Math.random\` or the clock (see \`unseeded-randomness\`); a counter or cache at module
level that changes as the code runs; a state object changed in place and kept between episodes.

**Fix.** Make each function depend only on its arguments (and, for sampled models, on the \`rng\` it is given).
`.trim(),
  check(ctx) {
    for (const site of ctx.spec.typescript?.nondeterminism ?? []) {
      ctx.report({
        message: `${site.message}; the results cannot be trusted until the model is deterministic`,
        span: site.span,
      });
    }
  },
};
