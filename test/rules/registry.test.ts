import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { findRule, RULES } from '../../server/src/rules/registry';
import type { Severity } from '../../server/src/rules/types';

/**
 * The rule catalog, version 1, of the design brief: ids are contracts that users' configs and
 * CI scripts name, with their default severities.
 */
const CATALOG: Record<string, Severity> = {
  schema: 'error',
  'undeclared-state': 'error',
  'undeclared-action': 'error',
  'probability-sum': 'error',
  'negative-probability': 'error',
  'missing-outcomes': 'error',
  'dead-end': 'error',
  'terminal-has-transitions': 'warning',
  'duplicate-transition': 'warning',
  'unreachable-state': 'info',
  'unreachable-terminal': 'warning',
  'trap-state': 'warning',
  'unbounded-return': 'error',
  'reward-loop': 'warning',
  'failure-preferred': 'warning',
  'living-reward': 'warning',
  'objective-sign': 'warning',
  'term-direction': 'warning',
  'shaping-not-potential': 'warning',
  'terminal-potential': 'warning',
  'shaping-changes-policy': 'warning',
  'goal-discounted-away': 'warning',
  'horizon-too-short': 'warning',
  'time-dependent-optimum': 'warning',
  'reward-scale': 'info',
  'tiny-probability': 'info',
  'enumeration-limit': 'warning',
  'model-error': 'error',
  'non-finite-reward': 'error',
  'unseeded-randomness': 'warning',
  'nondeterministic-model': 'error',
  'episode-never-ends': 'warning',
  // Added after version 1 (issue 14): TypeScript syntax errors, which were reported as `schema`.
  syntax: 'error',
  // Added after version 1 (issue 11): the empirical model of a sampled model was not built, or is incomplete.
  'empirical-model': 'info',
};

describe('rule registry', () => {
  it('is sorted by id in code-unit order, so the list is easy to scan and merge', () => {
    const ids = RULES.map((rule) => rule.id);
    const sorted = [...ids].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
    expect(ids).toEqual(sorted);
  });

  it('has unique ids, each findable', () => {
    const ids = RULES.map((rule) => rule.id);
    expect(new Set(ids).size).toBe(ids.length);
    for (const rule of RULES) expect(findRule(rule.id)).toBe(rule);
    expect(findRule('no-such-rule')).toBeUndefined();
  });

  it('registers only catalog ids, with the catalog default severity', () => {
    for (const rule of RULES) {
      expect(Object.keys(CATALOG), `${rule.id} is not in the catalog`).toContain(rule.id);
      expect(rule.defaultSeverity, rule.id).toBe(CATALOG[rule.id]);
    }
  });

  it('registers every rule of the catalog', () => {
    const ids = new Set(RULES.map((rule) => rule.id));
    for (const id of Object.keys(CATALOG)) expect(ids.has(id), id).toBe(true);
  });

  it.each(RULES.map((rule) => [rule.id, rule] as const))(
    '%s is documented: summary, when it fires, how to fix',
    (_id, rule) => {
      expect(rule.summary.trim().length).toBeGreaterThan(10);
      expect(rule.summary.includes('\n')).toBe(false);
      expect(rule.documentation.trim().length).toBeGreaterThan(300);
      // What triggers it: "When it fires" or "What it finds".
      expect(rule.documentation).toMatch(/fires|finds/i);
      expect(rule.documentation).toMatch(/fix/i);
      for (const [name, threshold] of Object.entries(rule.thresholds ?? {})) {
        expect(Number.isFinite(threshold.default), `${rule.id}.${name}`).toBe(true);
        expect(threshold.description.length, `${rule.id}.${name}`).toBeGreaterThan(40);
      }
    },
  );

  it.each(RULES.map((rule) => [rule.id] as const))(
    '%s has a table file under test/rules that runs it through the rule tester',
    (id) => {
      const file = join(__dirname, `${id}.test.ts`);
      expect(existsSync(file), `${id}.test.ts`).toBe(true);
      const text = readFileSync(file, 'utf8');
      expect(text).toMatch(/^testRule\(/m);
      expect(text).toContain(`'${id}'`);
    },
  );
});
