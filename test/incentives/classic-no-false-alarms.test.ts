/**
 * No false alarms on textbook MDPs: every spec in test/fixtures/classic (Sutton and Barto, Reinforcement
 * Learning: An Introduction, 2nd ed., Examples 3.5/3.8, 4.1, 4.3, 6.2, 6.5, 6.6; Russell and Norvig,
 * Artificial Intelligence: A Modern Approach, 3rd ed., Figure 17.1) is a well-posed MDP whose rewards ask
 * for what the book intends. No rule in the registry may raise a warning or an error on them, and the
 * reward-incentive rules may raise nothing at all.
 */
import { readdirSync, readFileSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import { RULES } from '../../server/src/rules/registry';
import { checkSpec, findingsOf } from '../helpers/specs';
import { INCENTIVE_RULES } from './incentive-rules';

const FOLDER = path.resolve(__dirname, '..', 'fixtures', 'classic');
const FIXTURES = readdirSync(FOLDER)
  .filter((f) => f.endsWith('.mdp.json'))
  .sort();

describe('classic textbook MDPs raise no warning and no error from any rule', () => {
  it('the fixtures are all there', () => {
    expect(FIXTURES).toHaveLength(7);
  });

  it('every incentive rule is in the registry', () => {
    const ids = RULES.map((r) => r.id);
    for (const id of INCENTIVE_RULES) expect(ids).toContain(id);
  });

  describe.each(FIXTURES)('%s', (file) => {
    const report = checkSpec(readFileSync(path.join(FOLDER, file), 'utf8'));

    it('is analysed without internal errors', () => {
      expect(report.notAnalysed).toBeUndefined();
      expect(report.internalErrors).toEqual([]);
      expect(report.analysis).toBeDefined();
    });

    it.each(RULES.map((r) => r.id))('%s: no warning, no error', (id) => {
      const serious = findingsOf(report, id).filter((f) => f.severity !== 'info');
      expect(serious.map((f) => f.message)).toEqual([]);
    });

    it.each(INCENTIVE_RULES)('%s: nothing at all', (id) => {
      expect(findingsOf(report, id).map((f) => f.message)).toEqual([]);
    });
  });
});
