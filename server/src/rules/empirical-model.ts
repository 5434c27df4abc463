import type { Rule } from './types';

/**
 * Rules that read only what was sampled (a seen loop, a seen reward), so they also run on an
 * empirical model whose exploration did not try every state; the others conclude from what is
 * missing (no exit, no route) and need every seen state tried.
 */
export const SEEN_FACT_RULES: ReadonlySet<string> = new Set([
  'living-reward',
  'non-finite-reward',
  'objective-sign',
  'reward-scale',
  'shaping-not-potential',
  'term-direction',
  'unbounded-return',
  'unreachable-terminal',
]);

export const empiricalModel: Rule = {
  id: 'empirical-model',
  defaultSeverity: 'info',
  summary:
    "The model built from a sampled model's transitions could not be built, or does not cover every state it saw.",
  needs: 'spec',
  sources: ['sampled'],
  thresholds: {
    keyCap: {
      default: 5000,
      description:
        'Distinct state keys beyond which no empirical model is built. Each key is tried with every action `tries` ' +
        'times, so 5,000 keys of 4 actions cost 600,000 samples: beyond that the samples, not the analysis, are the bottleneck.',
    },
    tries: {
      default: 30,
      description:
        'Samples the exploration pass gives each (state key, action) pair. With 30 samples an outcome never seen has a ' +
        'probability below 0.11 at 95% (Wilson), and a probability seen has a Wilson half-width of at most 0.17.',
    },
    countedSteps: {
      default: 200000,
      description:
        'Rollout steps counted into the empirical model at most (whole episodes; later ones are not counted). Counting costs ' +
        'a few microseconds a step, so 200,000 keep it under a second; the exploration pass covers what they leave out.',
    },
    exploreBudget: {
      default: 100000,
      description: "Samples the exploration pass may draw in all: about a second of a typical model's code.",
    },
    tolerance: {
      default: 0.1,
      description:
        'Largest 95% Wilson half-width of a probability (and Hoeffding half-width of a varying reward, relative to its size) ' +
        'at which a finding from samples counts as surviving the sampling error. Common practice for a screening check.',
    },
  },
  documentation: `
**What it is.** For a sampled model (\`sample(state, action, rng)\`), Episcope counts the transitions of its
rollouts per (state key, action), then explores: it tries every action of every key it has seen \`tries\`
times (default 30), breadth-first, within \`exploreBudget\` samples. From the counts it builds the
empirical model (probabilities = counts / samples, rewards = mean rewards) and runs the exact analysis
and the rules on it. Every finding made on it ends with its sample evidence: the samples behind it, the
least certain probability it uses with its 95% Wilson interval, and whether it holds within the sampling
error (see \`tolerance\`). A state's key is its JSON, or what the spec's \`stateKey(state)\` returns.

**When it fires (info).** The empirical model was not built: more distinct keys than \`keyCap\` (continuous
states without a \`stateKey\`), a \`stateKey\` that threw or returned something other than a string or a
number (also a \`model-error\`), or a reward that is not finite. Or it was built but the exploration budget
ran out before every key was tried: keys seen only as targets count as ending the episode, and the rules
that conclude from what is missing (reward-loop, failure-preferred, trap-state, unreachable-terminal and
the like) do not run on it.

**Fix.** Give the spec a \`stateKey(state)\` that rounds continuous quantities to a grid, raise \`keyCap\` or
\`exploreBudget\` in \`episcope.config.json\` (\`"thresholds": { "empirical-model": { ... } }\`).
`.trim(),
  check(ctx) {
    const empirical = ctx.spec.typescript?.empirical;
    if (!empirical) return;
    if (!empirical.built) {
      ctx.report({
        message: `the empirical model (built from the sampled transitions) was not built: ${empirical.reason ?? 'no transition was recorded'}; rules that need a model did not run on this sampled model`,
        span: empirical.span,
      });
      return;
    }
    if (empirical.complete) return;
    const unexplored =
      empirical.unexplored > 0
        ? `; ${empirical.unexplored} of its ${empirical.states} state keys were seen but never tried and count as ending the episode`
        : '';
    ctx.report({
      message:
        `${empirical.exploreCut ?? 'the exploration stopped'} before every state key was tried ${empirical.tries} times with every action ` +
        `(${empirical.episodes} episodes, ${empirical.steps} steps, ${empirical.exploreSamples} exploration samples)${unexplored}. ` +
        `Only the rules that read what was sampled (${[...SEEN_FACT_RULES].join(', ')}) ran on the empirical model; raise exploreBudget or keyCap, or bound the state, for the others`,
      span: empirical.span,
    });
  },
};
