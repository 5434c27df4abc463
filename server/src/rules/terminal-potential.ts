import { formatAmount, formatSigned } from './incentive-text';
import type { Rule } from './types';

export const terminalPotential: Rule = {
  id: 'terminal-potential',
  defaultSeverity: 'warning',
  summary: 'A shaping potential is non-zero on a terminal state.',
  needs: 'graph',
  sources: ['json'],
  documentation: `
**What it finds.** \`shaping.potential\` adds discount * Phi(s') - Phi(s) to every transition. Along an
episode these amounts telescope: everything but -Phi(start) and discount^T * Phi(last state) cancels. When
the last state is a terminal with Phi != 0, that final amount is never paid back, so it acts as an extra
bonus (or cost) for ending in that terminal, and it can change which policy is optimal. Ng, Harada and
Russell's invariance result needs Phi = 0 at absorbing states; Grzes (2017, "Reward shaping in episodic
reinforcement learning") shows what goes wrong without it.

**When it fires.** A state declared \`terminal\` has a non-zero entry in \`shaping.potential\`. The message
says what entering the terminal gains from the potential (discount * Phi).

**Fix.** Set the terminal's potential to 0 (the quick fix does this). If you wanted a bonus for reaching that
terminal, write it as a reward on the transitions that enter it, where it is visible.

**Thresholds.** None: any non-zero terminal potential breaks the invariance argument.
`.trim(),
  check(ctx) {
    const model = ctx.model;
    if (!model?.potential) return;
    const discount = ctx.spec.discount?.value ?? 1;
    for (let s = 0; s < model.stateCount; s++) {
      const value = model.potential[s];
      if (model.terminal[s] === 0 || value === 0 || !Number.isFinite(value)) continue;
      const id = model.stateIds[s];
      const state = ctx.spec.states.find((candidate) => candidate.id === id);
      const entry = ctx.spec.potential.find((candidate) => candidate.state === id);
      if (!state || !entry) continue;
      const gain = discount * entry.value;
      ctx.report({
        message:
          `the shaping potential of ${state.terminal} terminal '${entry.state}' is ${formatAmount(entry.value)}, not 0: ` +
          `every entry into it gets ${formatSigned(gain)} (discount * Phi) from the shaping that no later step takes back, ` +
          `so the shaping ${gain > 0 ? 'rewards' : 'penalises'} ending there and can change which policy is optimal`,
        span: entry.span,
        related: state.terminalSpan
          ? [{ span: state.terminalSpan, message: `'${entry.state}' is declared terminal here` }]
          : [],
        fixes: entry.valueSpan
          ? [{ title: `Set the potential of '${entry.state}' to 0`, edits: [{ span: entry.valueSpan, newText: '0' }] }]
          : [],
      });
    }
  },
};
