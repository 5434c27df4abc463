import type { Rule } from './types';

export const unseededRandomness: Rule = {
  id: 'unseeded-randomness',
  defaultSeverity: 'warning',
  summary: 'Model code calls Math.random, Date.now, crypto or similar instead of the rng it is given.',
  needs: 'spec',
  sources: ['enumerable', 'sampled'],
  documentation: `
**What it finds.** TypeScript model code that draws from a random source Episcope does not seed
(\`Math.random\`, \`crypto.getRandomValues\`, \`crypto.randomInt\`, ...) or reads the clock (\`Date.now\`,
\`performance.now\`, \`new Date()\`). It is found twice over: by reading the source (every such call in the
spec file) and by watching the code run (calls made in imported files too, with their count).

**Why it matters.** Rollouts are reproducible only when every random draw comes from the seeded \`rng\`:
with \`Math.random\` the same \`--seed\` gives different figures, and a bug seen once cannot be replayed.
In an enumerable model, randomness inside \`outcomes\` makes the listed outcomes change from call to call,
so the enumerated MDP is not the model (see \`nondeterministic-model\`). Reading the clock makes the
dynamics depend on when and how fast the code runs.

**Fix.** In a sampled model, draw from the \`rng\` that \`start(rng)\` and \`sample(state, action, rng)\`
receive: \`rng()\` for a float in [0, 1), \`rng.int(n)\`, \`rng.pick(list)\`, \`rng.chance(p)\`,
\`rng.normal(mean, sd)\`. In an enumerable model, list every possibility as an outcome with its probability.
Keep time in the state (a step counter) instead of reading the clock.
`.trim(),
  check(ctx) {
    const evidence = ctx.spec.typescript;
    if (!evidence) return;
    const lineOf = (offset: number) => {
      let line = 0;
      for (let i = 0; i < offset && i < ctx.text.length; i++) if (ctx.text.charCodeAt(i) === 10) line++;
      return line;
    };
    const advice =
      evidence.form === 'enumerable'
        ? 'list each possibility as an outcome with its probability instead'
        : 'draw from the rng the model is given (rng(), rng.int(n), rng.pick(list)) so runs can be replayed from the seed';
    const reported = new Set<string>();
    for (const site of evidence.staticRandomness) {
      const clock = site.api.endsWith('.now') || site.api === 'new Date()';
      const ran = evidence.runtimeRandomness.find((r) => r.api === site.api);
      const count = ran?.count ? ` (called ${ran.count} time${ran.count === 1 ? '' : 's'} while the model ran)` : '';
      ctx.report({
        message: clock
          ? `${site.api} reads the clock${count}: the model's answers then depend on when it runs; keep time in the state instead`
          : `${site.api} is a random source Episcope cannot seed${count}: results differ from run to run with the same --seed; ${advice}`,
        span: site.span,
      });
      reported.add(`${site.api}@${lineOf(site.span.start)}`);
    }
    for (const site of evidence.runtimeRandomness) {
      if (evidence.staticRandomness.some((s) => s.api === site.api && lineOf(s.span.start) === lineOf(site.span.start)))
        continue;
      if (reported.has(`${site.api}@${lineOf(site.span.start)}`)) continue;
      const where = site.elsewhere ? ` (first call at ${site.elsewhere})` : '';
      ctx.report({
        message: `${site.api} was called ${site.count ?? 0} time${site.count === 1 ? '' : 's'} while the model ran${where}: results differ from run to run with the same --seed; ${advice}`,
        span: site.span,
      });
    }
  },
};
