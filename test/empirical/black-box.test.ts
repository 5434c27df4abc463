/**
 * The empirical model of a black box (an enumerable spec wrapped so that it can only be sampled)
 * must lead to the same findings as the exact model: the planted-bug examples of examples/ and the
 * clean ones. The exact findings are the reference; the black box sees only seeded samples.
 */
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { analyzeJsonText } from '../../server/src/analyze';
import { resolveConfig } from '../../server/src/config';
import { analyzeTs } from '../typescript/ts-specs';
import { blackBoxOf } from './black-box';

const EXAMPLES = join(__dirname, '../../examples');
/** The textbook MDPs (clean: no warning as exact models); see test/incentives/classic-fixtures.test.ts. */
const CLASSIC = join(__dirname, '../fixtures/classic');
/** Rules that read the spec or the sandbox's evidence, not a model: they have no exact counterpart. */
const SAMPLED_ONLY = new Set([
  'empirical-model',
  'episode-never-ends',
  'unseeded-randomness',
  'nondeterministic-model',
]);
/** Rules about declared states that no policy reaches: a black box declares no states, so it has nothing to compare. */
const DECLARED_ONLY = new Set(['unreachable-state']);

const wrapped = [EXAMPLES, CLASSIC]
  .flatMap((folder) =>
    readdirSync(folder)
      .filter((name) => name.endsWith('.mdp.json'))
      .map((name) => ({ name, text: readFileSync(join(folder, name), 'utf8') })),
  )
  .map((example) => ({ ...example, box: blackBoxOf(example.text) }))
  .filter((example) => example.box.text !== undefined);

describe('black boxes: the empirical model finds what the exact model finds', () => {
  it('wraps most examples (the others have a potential or do not compile)', () => {
    expect(wrapped.length).toBeGreaterThanOrEqual(17);
  });

  for (const example of wrapped) {
    it(`${example.name}`, async () => {
      const exact = analyzeJsonText(example.name, example.text, { config: resolveConfig({}) });
      const sampled = await analyzeTs(example.box.text!);
      const exactRules = [
        ...new Set(exact.findings.map((f) => f.rule).filter((rule) => !DECLARED_ONLY.has(rule))),
      ].sort();
      const sampledRules = [
        ...new Set(sampled.findings.map((f) => f.rule).filter((rule) => !SAMPLED_ONLY.has(rule))),
      ].sort();
      expect(sampled.internalErrors).toEqual([]);
      expect(sampled.findings.filter((f) => f.rule === 'empirical-model').map((f) => f.message)).toEqual([]);
      expect(sampledRules).toEqual(exactRules);
      for (const finding of sampled.findings.filter((f) => !SAMPLED_ONLY.has(f.rule))) {
        expect(finding.fromSamples, finding.rule).toBeDefined();
        expect(finding.message).toContain('[from samples: ');
      }
    }, 120_000);
  }
});
