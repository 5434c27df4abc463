/**
 * The one explicit list of rules, sorted by id. A rule that is not listed here does not run.
 * Add a rule by importing its file and inserting it in id order (a test checks the order).
 */
import { enumerationLimit } from './enumeration-limit';
import { episodeNeverEnds } from './episode-never-ends';
import { modelError } from './model-error';
import { nondeterministicModel } from './nondeterministic-model';
import type { Rule } from './types';
import { unseededRandomness } from './unseeded-randomness';

export const RULES: readonly Rule[] = [
  enumerationLimit,
  episodeNeverEnds,
  modelError,
  nondeterministicModel,
  unseededRandomness,
];

const byId = new Map(RULES.map((rule) => [rule.id, rule]));

export function findRule(id: string): Rule | undefined {
  return byId.get(id);
}
