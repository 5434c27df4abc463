import { stateName, type CompiledModel } from '../model/compiled';
import type { FiniteHorizonSolution } from '../analysis/types';
import { findTimeFlips, timeBlindLoss } from '../analysis/time-dependence';
import { actionOf, choiceSpan, describePath, formatAmount, stateSpan, traceOfPath } from './incentive-text';
import type { Rule } from './types';

export const timeDependentOptimum: Rule = {
  id: 'time-dependent-optimum',
  defaultSeverity: 'warning',
  summary: 'With a horizon, the optimal action at a state some policy reaches changes with the steps left.',
  needs: 'analysis',
  sources: ['json', 'enumerable'],
  thresholds: {
    tieTolerance: {
      default: 1e-6,
      description:
        'Q values closer than this (relative to the largest value magnitude, at least 1) count as ties, so ' +
        'differences of rounding size never make a flip. 1e-6 matches the default precision of the value ' +
        'bounds: anything smaller is not a difference the analysis reports elsewhere either.',
    },
  },
  documentation: `
**What it finds.** With a \`horizon\` (time limit), what is best can depend on the time left: near the end of an
episode it may pay to grab a small sure reward instead of heading for a goal that is out of reach in time.
The optimal policy is then non-stationary, and a policy that does not observe the time (or the steps left)
cannot follow it; it learns a compromise and its value estimates are confused by states that look the same
but are worth different amounts (F. Pardo, A. Tavakoli, V. Levdik and P. Kormushev, "Time limits in
reinforcement learning", ICML 2018).

**When it fires.** The finite-horizon solution (backward induction over steps left) is followed forward
from the start along every action, so the states checked are those some policy can be in with a given
number of steps left, on the optimal path or off it: a learner meets both while exploring. At each such
state the rule keeps the actions that were best at every visit so far; when none is left, the state's
best action depends on the time. The message names the state, the steps left at which the best action
flips, both actions with their Q values, what a time-blind policy loses there, and what a time-blind
(stationary, deterministic) policy gives up from the start: exact when the model is small enough to try
every such policy, else an upper bound from the policies that always act as if k steps were left. When
that is 0, the flip matters for learning, not for the optimal return.
The rule needs the per-step table of the finite-horizon solution, which the analysis keeps up to about 16
million (steps x states) entries; beyond that it does not run.

**Fix.** If the time limit is part of the task, put the time left (or the step count) into the state
the policy sees. If it only bounds training episodes, it is truncation, not termination: treat a cut-off
episode as bootstrapped rather than terminal in training, and consider removing \`horizon\` from the spec so
that the analysis matches the stationary problem.
`.trim(),
  check(ctx) {
    const model = ctx.model;
    const solution = ctx.analysis?.horizon;
    if (!model || !solution) return;
    const result = findTimeFlips(model, solution, ctx.threshold('tieTolerance'), 1);
    const flip = result.flips[0];
    if (!flip) return;
    const state = stateName(model, flip.state);
    const keep = actionOf(model, flip.earlierChoice);
    const now = actionOf(model, flip.bestChoice);
    const sign = model.maximize ? 1 : -1;
    const lossNow = sign * (flip.qNow.best - flip.qNow.earlier);
    const lossEarlier = sign * (flip.qEarlier.earlier - flip.qEarlier.best);
    const range = stepsLeft(flip.earlierStepsLeft);
    const others = result.flippedStates > 1 ? `; ${result.flippedStates - 1} other reachable states also flip` : '';
    ctx.report({
      message:
        `at '${state}' the optimal action depends on the time left: with ${range} it is '${keep}' ` +
        `(Q ${formatAmount(flip.qEarlier.earlier)} against ${formatAmount(flip.qEarlier.best)} for '${now}'), ` +
        `with ${stepsLeft(flip.stepsLeft)} it is '${now}' (Q ${formatAmount(flip.qNow.best)} against ${formatAmount(flip.qNow.earlier)}); ` +
        `a policy that does not see time loses ${formatAmount(lossNow)} there if it keeps '${keep}', ` +
        `or ${formatAmount(lossEarlier)} with ${stepsLeft(flip.earlierStepsLeft)} if it always takes '${now}'` +
        `${others}; ${fromStart(model, solution, ctx.threshold('tieTolerance'))}; a route there: ${describePath(model, flip.path)}`,
      span: stateSpan(ctx.spec, model, flip.state),
      trace: traceOfPath(ctx.spec, model, flip.path),
      related: [
        { span: choiceSpan(ctx.spec, model, flip.earlierChoice), message: `'${keep}': best with ${range}` },
        {
          span: choiceSpan(ctx.spec, model, flip.bestChoice),
          message: `'${now}': best with ${stepsLeft(flip.stepsLeft)}`,
        },
        ...(ctx.spec.horizon
          ? [{ span: ctx.spec.horizon.span, message: `the horizon, ${solution.horizon} steps` }]
          : []),
      ],
    });
  },
};

/** What a time-blind policy gives up from the start, or that it gives up nothing. */
function fromStart(model: CompiledModel, solution: FiniteHorizonSolution, tieTolerance: number): string {
  const { optimal, timeBlind, exact, tried } = timeBlindLoss(model, solution);
  const sign = model.maximize ? 1 : -1;
  const loss = sign * (optimal - timeBlind);
  if (loss <= tieTolerance * Math.max(1, Math.abs(optimal))) {
    return (
      `from the start a time-blind policy still attains the optimal return ${formatAmount(optimal)}, so this matters ` +
      `for learning (a learner that does not see time meets conflicting targets here), not for the optimal return`
    );
  }
  const verb = model.maximize ? 'earns' : 'costs';
  const gap = `${formatAmount(loss)} ${model.maximize ? 'less' : 'more'}`;
  return exact
    ? `from the start the best time-blind (stationary, deterministic) policy ${verb} ${formatAmount(timeBlind)} against the optimal ${formatAmount(optimal)}, ${gap}`
    : `from the start a time-blind (stationary, deterministic) policy gives up at most ${formatAmount(loss)} of the optimal ${formatAmount(optimal)} (the best of ${tried} such policies tried)`;
}

function stepsLeft(k: number): string {
  return `${k} step${k === 1 ? '' : 's'} left`;
}
