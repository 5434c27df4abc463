import { DEFAULT_STEP_CAP } from '../analysis/rollouts';
import type { Rule } from './types';

export const episodeNeverEnds: Rule = {
  id: 'episode-never-ends',
  defaultSeverity: 'warning',
  summary: 'Sampled model, discount 1, no horizon, and rollouts hit the step cap without ending.',
  needs: 'spec',
  sources: ['enumerable', 'sampled'],
  thresholds: {
    stepCap: {
      default: DEFAULT_STEP_CAP,
      description:
        'Steps after which a rollout without a horizon is stopped. Far longer than the episodes of typical episodic tasks, ' +
        'and short enough that a thousand never-ending rollouts finish in seconds.',
    },
  },
  documentation: `
**What it finds.** A model run by rollouts (a sampled model, or an enumerable one past the state cap) with
discount 1 and no \`horizon\`, where some rollouts under the uniformly random policy ran \`stepCap\` steps
without reaching a terminal.

**Why it matters.** With discount 1 and no time limit the return is the plain sum of rewards, which is
defined only for episodes that end. An episode that can go on forever makes the return (and anything a
learner estimates from it) unbounded or meaningless, and training on it spends trajectories that never
bootstrap from a terminal.

**Fix.** Add a \`horizon\` (the episode is cut after that many steps), give the model a terminal that every
policy eventually reaches, or use a discount below 1.

**Thresholds.** \`stepCap\` (default 10,000) sets where a rollout without a horizon is stopped. With a
discount below 1 a rollout also stops once discount^t falls below 1e-12, so the estimates leave out at most
1e-12 times the largest return that could follow.
`.trim(),
  check(ctx) {
    const rollouts = ctx.spec.typescript?.rollouts;
    if (!rollouts || rollouts.stepCapped === 0) return;
    if (ctx.spec.discount?.value !== 1 || ctx.spec.horizon !== undefined) return;
    const member = ctx.spec.typescript?.members.sample ?? ctx.spec.typescript?.members.outcomes;
    const share = (100 * rollouts.stepCapped) / rollouts.episodes;
    ctx.report({
      message:
        `${rollouts.stepCapped} of ${rollouts.episodes} rollouts (${share.toFixed(1)}%) ran ${rollouts.stepCap} steps without ending; ` +
        'with discount 1 and no horizon their return is not defined. Add a horizon, a terminal every policy reaches, or a discount below 1',
      span: ctx.spec.discount?.span ?? member?.nameSpan ?? ctx.spec.rootSpan,
    });
  },
};
