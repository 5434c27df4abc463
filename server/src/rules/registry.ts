/**
 * The one explicit list of rules, sorted by id. A rule that is not listed here does not run.
 * Add a rule by importing its file and inserting it in id order (a test checks the order).
 */
import type { Rule } from './types';

export const RULES: readonly Rule[] = [];

const byId = new Map(RULES.map((rule) => [rule.id, rule]));

export function findRule(id: string): Rule | undefined {
  return byId.get(id);
}
