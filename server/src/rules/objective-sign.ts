import { TERMINAL_CODE, stateName } from '../model/compiled';
import { unshapedReward } from '../analysis/shaping';
import {
  choiceOfOutcome,
  describeStep,
  formatAmount,
  formatSigned,
  outcomeSpan,
  ownerOfChoice,
} from './incentive-text';
import type { Rule } from './types';

export const objectiveSign: Rule = {
  id: 'objective-sign',
  defaultSeverity: 'warning',
  summary: 'Entering a failure pays more than entering a goal (under minimize: costs less).',
  needs: 'model',
  sources: ['json', 'enumerable', 'sampled'],
  documentation: `
**What it finds.** A spec whose rewards point the wrong way at the end of the episode: the best way to enter a
\`failure\` terminal pays more than the best way to enter a \`goal\`. Typical causes are a crash penalty
written with the wrong sign, a goal bonus forgotten while the step cost still applies on the last step, or
\`"objective": "minimize"\` on a spec written as rewards (or the reverse).

**When it fires.** Under \`maximize\`: the largest reward of any outcome that enters a failure terminal is
greater than the largest reward of any outcome that enters a goal terminal. Under \`minimize\` (costs): the
smallest cost of entering a failure is below the smallest cost of entering a goal. The comparison uses the
reward without shaping (terms marked \`shaping\` and \`shaping.potential\` are left out), because shaping
amounts depend on where the episode ends by design. Specs without both a goal and a failure terminal are not
checked.

**Fix.** Make entering a failure strictly worse than entering a goal: a penalty on the transitions into
failures, a bonus on those into goals, or the right \`objective\`.

**Thresholds.** None: a tie is allowed, any strict inversion is reported.
`.trim(),
  check(ctx) {
    const model = ctx.model;
    if (!model) return;
    const reward = unshapedReward(ctx.spec, model);
    const sign = model.maximize ? 1 : -1;
    const best = { goal: -1, failure: -1 };
    for (let c = 0; c < model.choiceCount; c++) {
      for (let k = model.outcomeStart[c]; k < model.outcomeStart[c + 1]; k++) {
        if (!(model.outcomeProb[k] > 0)) continue;
        const code = model.terminal[model.outcomeTarget[k]];
        const kind = code === TERMINAL_CODE.goal ? 'goal' : code === TERMINAL_CODE.failure ? 'failure' : undefined;
        if (!kind) continue;
        const current = best[kind];
        if (current < 0 || sign * reward[k] > sign * reward[current]) best[kind] = k;
      }
    }
    if (best.goal < 0 || best.failure < 0) return;
    const failureReward = reward[best.failure];
    const goalReward = reward[best.goal];
    if (!(sign * failureReward > sign * goalReward)) return;
    const failureChoice = choiceOfOutcome(model, best.failure);
    const goalChoice = choiceOfOutcome(model, best.goal);
    const failure = stateName(model, model.outcomeTarget[best.failure]);
    const goal = stateName(model, model.outcomeTarget[best.goal]);
    const verb = model.maximize ? 'pays' : 'costs';
    const comparison = model.maximize ? 'more' : 'less';
    ctx.report({
      message:
        `under ${model.maximize ? 'maximize' : 'minimize'}, entering failure '${failure}' ${verb} ${formatSigned(failureReward)} ` +
        `(${describeStep(model, failureChoice, best.failure)}), ${comparison} than the best entry into a goal: ` +
        `'${goal}' ${verb} ${formatSigned(goalReward)} (${describeStep(model, goalChoice, best.goal)}); ` +
        `on that last step, failing is better than succeeding by ${formatAmount(sign * (failureReward - goalReward))}`,
      span: outcomeSpan(ctx.spec, model, failureChoice, best.failure),
      related: [
        {
          span: outcomeSpan(ctx.spec, model, goalChoice, best.goal),
          message: `the best entry into a goal: ${describeStep(model, goalChoice, best.goal)} ${verb} ${formatSigned(goalReward)}`,
        },
        { span: model.stateSpan[model.outcomeTarget[best.failure]], message: `'${failure}' is a failure terminal` },
        { span: model.stateSpan[ownerOfChoice(model, failureChoice)], message: `the failure is entered from here` },
      ],
    });
  },
};
