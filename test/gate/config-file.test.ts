import { mkdtempSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import { DEFAULT_CONFIG } from '../../server/src/config';
import { CONFIG_FILE_NAME, findConfigFile, loadConfigFile, parseConfigText } from '../../server/src/config-file';
import type { Rule } from '../../server/src/rules/types';
import { LineIndex } from '../../server/src/load/lines';
import { CATALOG_RULE_IDS } from '../../scripts/readme-sections';

// A stand-in registry with one threshold, so that threshold keys can be checked without the real rules.
const RULES: Rule[] = [
  {
    id: 'reward-loop',
    defaultSeverity: 'warning',
    summary: 'loop',
    documentation: 'loop',
    needs: 'analysis',
    sources: ['json'],
    thresholds: { probabilityGap: { default: 0.2, description: 'gap' } },
    check: () => undefined,
  },
  {
    id: 'schema',
    defaultSeverity: 'error',
    summary: 's',
    documentation: 's',
    needs: 'spec',
    sources: ['json'],
    check: () => undefined,
  },
];

/** The 1-based line and column where a finding starts, and the text it covers. */
function where(text: string, span: { start: number; end: number }): string {
  const p = new LineIndex(text).position(span.start);
  return `${p.line + 1}:${p.character + 1} ${text.slice(span.start, span.end)}`;
}

describe('config file', () => {
  it('resolves a valid file with comments and trailing commas', () => {
    const text = `{
  // Severities
  "rules": { "reward-loop": "error", "schema": "off", },
  "thresholds": { "reward-loop.probabilityGap": 0.3 },
  "ignore": [ { "rule": "reward-loop", "path": "legacy/**", "reason": "kept as a teaching case" } ],
  "stateCap": 5000, "rollouts": 200, "seed": 7, "precision": 1e-8,
}`;
    const file = parseConfigText('/repo/episcope.config.json', text, { rules: RULES });
    expect(file.findings).toEqual([]);
    expect(file.config).toEqual({
      rules: { 'reward-loop': 'error', schema: 'off' },
      thresholds: { 'reward-loop.probabilityGap': 0.3 },
      ignore: [{ rule: 'reward-loop', path: 'legacy/**', reason: 'kept as a teaching case' }],
      stateCap: 5000,
      rollouts: 200,
      seed: 7,
      precision: 1e-8,
      learning: DEFAULT_CONFIG.learning,
      jobs: DEFAULT_CONFIG.jobs,
      baseDir: '/repo',
    });
    expect(where(text, file.ignoreSpans[0])).toMatch(/^5:15 \{ "rule": "reward-loop"/);
  });

  it('reports each problem at its key or value and keeps the valid parts', () => {
    const text = `{
  "rules": { "reward-lop": "warning", "schema": "loud", "reward-loop": "info" },
  "thresholds": { "loopgap": 1, "reward-loop.gap": 2, "reward-loop.probabilityGap": 0.4 },
  "ignore": [
    { "rule": "schema", "path": "a.mdp.json" },
    { "rule": "schema", "path": "b.mdp.json", "reason": "generated file" }
  ],
  "seed": -1,
  "stateCap": 100,
  "colour": true
}`;
    const file = parseConfigText('/repo/episcope.config.json', text, { rules: RULES });
    const got = file.findings.map((f) => `${f.rule} ${f.severity} ${where(text, f.span)} | ${f.message}`).sort();
    expect(got).toEqual(
      [
        'config error 10:3 "colour" | unknown field "colour" (the fields are rules, thresholds, ignore, stateCap, rollouts, seed, precision, learning, halfWidth, jobs)',
        'config error 2:14 "reward-lop" | rules: no rule named "reward-lop" (did you mean "reward-loop"?)',
        'config error 2:49 "loud" | rules.schema must be one of "error", "warning", "info", "off"',
        'config error 3:19 "loopgap" | thresholds: the key "loopgap" must be "rule-id.name", e.g. "reward-loop.probabilityGap"',
        'config error 3:33 "reward-loop.gap" | threshold "reward-loop.gap": rule reward-loop has no threshold "gap" (its thresholds: reward-loop.probabilityGap)',
        'config error 5:5 { | ignore[0] needs "reason"',
        'config error 8:11 -1 | seed must be >= 0',
      ].sort(),
    );
    expect(file.config.rules).toEqual({ 'reward-loop': 'info' });
    expect(file.config.thresholds).toEqual({ 'reward-loop.probabilityGap': 0.4 });
    expect(file.config.ignore).toEqual([{ rule: 'schema', path: 'b.mdp.json', reason: 'generated file' }]);
    expect(where(text, file.ignoreSpans[0])).toMatch(/^6:5 \{ "rule": "schema", "path": "b.mdp.json"/);
    expect(file.config.seed).toBe(1);
    expect(file.config.stateCap).toBe(100);
  });

  it('reports a syntax error with its position and applies nothing', () => {
    const text = '{\n  "rules": { "schema": "off" }\n  "seed": 3\n}';
    const file = parseConfigText('/repo/episcope.config.json', text, { rules: RULES });
    expect(file.findings).toHaveLength(1);
    expect(where(text, file.findings[0].span)).toBe('3:3 "seed"');
    expect(file.findings[0].message).toBe(
      'not valid JSON: a comma was expected; nothing of this file applies until it is fixed',
    );
    expect(file.config.rules).toEqual({});
    expect(file.config.seed).toBe(1);
  });

  it('never throws on hostile text', () => {
    for (const text of [
      '',
      '[]',
      'null',
      '"x"',
      '{"rules": []}',
      '{"ignore": {}}',
      '{"thresholds": {"a.b": "x"}}',
      '{'.repeat(5000),
      '{"ignore": [1, null, []]}',
    ]) {
      const file = parseConfigText('/c/episcope.config.json', text, { rules: RULES });
      expect(file.findings.length).toBeGreaterThan(0);
      for (const f of file.findings) {
        expect(f.span.start).toBeGreaterThanOrEqual(0);
        expect(f.span.end).toBeLessThanOrEqual(Math.max(text.length, 1));
      }
    }
  });

  it('finds the nearest config file, no higher than the git root', () => {
    const root = mkdtempSync(path.join(tmpdir(), 'episcope-config-'));
    mkdirSync(path.join(root, 'repo', '.git'), { recursive: true });
    mkdirSync(path.join(root, 'repo', 'specs', 'deep'), { recursive: true });
    writeFileSync(path.join(root, CONFIG_FILE_NAME), '{}');
    expect(findConfigFile(path.join(root, 'repo', 'specs', 'deep'))).toBeUndefined();
    writeFileSync(path.join(root, 'repo', CONFIG_FILE_NAME), '{"seed": 9}');
    expect(findConfigFile(path.join(root, 'repo', 'specs', 'deep'))).toBe(path.join(root, 'repo', CONFIG_FILE_NAME));
    writeFileSync(path.join(root, 'repo', 'specs', CONFIG_FILE_NAME), '{"seed": 4}');
    const found = findConfigFile(path.join(root, 'repo', 'specs', 'deep'))!;
    expect(found).toBe(path.join(root, 'repo', 'specs', CONFIG_FILE_NAME));
    const loaded = loadConfigFile(found);
    expect(loaded.config.seed).toBe(4);
    expect(loaded.config.baseDir).toBe(path.join(root, 'repo', 'specs'));
    const missing = loadConfigFile(path.join(root, 'nope', CONFIG_FILE_NAME));
    expect(missing.findings[0].message).toMatch(/^cannot read the config file: ENOENT/);
  });
});

describe('config schema', () => {
  it('names exactly the catalog rules and the front rules, and every registered rule', async () => {
    const schema = JSON.parse(readFileSync(path.join(__dirname, '..', '..', 'schemas', 'config.schema.json'), 'utf8'));
    const ids = Object.keys(schema.properties.rules.properties).sort();
    // The rule catalog of DESIGN.md ("Rule catalog, version 1", kept once for the README's rules
    // table), plus the fronts' own config and suppression.
    // 'syntax' came after version 1 (issue 14): TypeScript syntax errors, which were 'schema' findings;
    // 'empirical-model' (issue 11): the model built from a sampled model's transitions.
    expect(ids).toEqual([...CATALOG_RULE_IDS, 'config', 'suppression', 'syntax', 'empirical-model'].sort());
    expect(schema.properties.ignore.items.properties.rule.enum).toEqual(['*', ...ids]);
    const { RULES: registered } = await import('../../server/src/rules/registry');
    for (const rule of registered) expect(ids).toContain(rule.id);
  });
});
