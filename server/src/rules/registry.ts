/**
 * The one explicit list of rules, sorted by id. A rule that is not listed here does not run.
 * Add a rule by importing its file and inserting it in id order (a test checks the order).
 */
import { deadEnd } from './dead-end';
import { duplicateTransition } from './duplicate-transition';
import { empiricalModel } from './empirical-model';
import { enumerationLimit } from './enumeration-limit';
import { episodeNeverEnds } from './episode-never-ends';
import { failurePreferred } from './failure-preferred';
import { goalDiscountedAway } from './goal-discounted-away';
import { horizonTooShort } from './horizon-too-short';
import { livingReward } from './living-reward';
import { missingOutcomes } from './missing-outcomes';
import { modelError } from './model-error';
import { negativeProbability } from './negative-probability';
import { nonFiniteReward } from './non-finite-reward';
import { nondeterministicModel } from './nondeterministic-model';
import { objectiveSign } from './objective-sign';
import { probabilitySum } from './probability-sum';
import { rewardLoop } from './reward-loop';
import { rewardScale } from './reward-scale';
import { schemaRule } from './schema';
import { shapingChangesPolicy } from './shaping-changes-policy';
import { shapingNotPotential } from './shaping-not-potential';
import { syntaxRule } from './syntax';
import { termDirection } from './term-direction';
import { terminalHasTransitions } from './terminal-has-transitions';
import { terminalPotential } from './terminal-potential';
import { timeDependentOptimum } from './time-dependent-optimum';
import { tinyProbability } from './tiny-probability';
import { trapState } from './trap-state';
import type { Rule } from './types';
import { unboundedReturn } from './unbounded-return';
import { undeclaredAction } from './undeclared-action';
import { undeclaredState } from './undeclared-state';
import { unreachableState } from './unreachable-state';
import { unreachableTerminal } from './unreachable-terminal';
import { unseededRandomness } from './unseeded-randomness';

export const RULES: readonly Rule[] = [
  deadEnd,
  duplicateTransition,
  empiricalModel,
  enumerationLimit,
  episodeNeverEnds,
  failurePreferred,
  goalDiscountedAway,
  horizonTooShort,
  livingReward,
  missingOutcomes,
  modelError,
  negativeProbability,
  nonFiniteReward,
  nondeterministicModel,
  objectiveSign,
  probabilitySum,
  rewardLoop,
  rewardScale,
  schemaRule,
  shapingChangesPolicy,
  shapingNotPotential,
  syntaxRule,
  termDirection,
  terminalHasTransitions,
  terminalPotential,
  timeDependentOptimum,
  tinyProbability,
  trapState,
  unboundedReturn,
  undeclaredAction,
  undeclaredState,
  unreachableState,
  unreachableTerminal,
  unseededRandomness,
];

const byId = new Map(RULES.map((rule) => [rule.id, rule]));

export function findRule(id: string): Rule | undefined {
  return byId.get(id);
}
