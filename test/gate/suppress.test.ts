import { describe, expect, it } from 'vitest';
import { resolveConfig, type ResolvedConfig } from '../../server/src/config';
import type { Finding } from '../../server/src/rules/types';
import { LineIndex } from '../../server/src/load/lines';
import {
  applySuppressions,
  globMatches,
  normalizePath,
  parseIgnoreComments,
  relativePath,
  scanLineComments,
  unusedIgnoreFindings,
} from '../../server/src/suppress';

const KNOWN = new Set(['reward-loop', 'living-reward', 'trap-state', 'model-error']);

/** A finding of `rule` on the first occurrence of `marker` in `text`. */
function findingAt(text: string, rule: string, marker: string): Finding {
  const start = text.indexOf(marker);
  if (start < 0) throw new Error(`marker ${marker} not in text`);
  return { rule, severity: 'warning', message: `${rule} at ${marker}`, span: { start, end: start + marker.length } };
}

function config(extra: Partial<ResolvedConfig> = {}): ResolvedConfig {
  return { ...resolveConfig(undefined), ...extra };
}

const SPEC = `export default defineMdp({
  name: "// episcope-ignore reward-loop: inside a string, not a comment",
  discount: 0.9, // episcope-ignore living-reward: the idle bonus is intended here
  // episcope-ignore reward-loop, trap-state: the charging loop is part of the scenario

  outcomes(state, action) {
    const note = \`a \${ { nested: "}" }.nested } // episcope-ignore model-error: in a template\`;
    return [];
  },
  terminal: (s) => /\\/\\//.test(s) ? "goal" : undefined, // episcope-ignore model-error
});
`;

describe('suppression comments', () => {
  it('finds only real line comments', () => {
    const comments = scanLineComments(SPEC).map((s) => SPEC.slice(s.start, s.end));
    expect(comments).toEqual([
      '// episcope-ignore living-reward: the idle bonus is intended here',
      '// episcope-ignore reward-loop, trap-state: the charging loop is part of the scenario',
      '// episcope-ignore model-error',
    ]);
    const parsed = parseIgnoreComments(SPEC);
    expect(parsed.map((c) => [c.line + 1, c.targetLine + 1, c.rules.map((r) => r.id), c.reason])).toEqual([
      [3, 3, ['living-reward'], 'the idle bonus is intended here'],
      [4, 6, ['reward-loop', 'trap-state'], 'the charging loop is part of the scenario'],
      [10, 10, ['model-error'], ''],
    ]);
  });

  it('suppresses findings on the covered line, reports unused and malformed comments', () => {
    const findings = [
      findingAt(SPEC, 'living-reward', '0.9'),
      findingAt(SPEC, 'reward-loop', 'outcomes'),
      findingAt(SPEC, 'reward-loop', 'discount'),
      findingAt(SPEC, 'model-error', 'terminal'),
    ];
    const result = applySuppressions({ path: '/r/a.mdp.ts', text: SPEC, findings, complete: true }, config(), KNOWN);
    expect(result.suppressed.map((s) => [s.finding.message, s.reason, s.source])).toEqual([
      ['living-reward at 0.9', 'the idle bonus is intended here', { kind: 'comment', line: 3 }],
      ['reward-loop at outcomes', 'the charging loop is part of the scenario', { kind: 'comment', line: 4 }],
    ]);
    const lines = new LineIndex(SPEC);
    const shown = result.findings.map((f) => `${lines.position(f.span.start).line + 1} ${f.rule}: ${f.message}`);
    expect(shown).toEqual([
      // Same rule, but on the line before the comment's target: not covered.
      '3 reward-loop: reward-loop at discount',
      '4 suppression: episcope-ignore for trap-state suppresses nothing: no trap-state finding starts on line 6; remove trap-state from it',
      '10 model-error: model-error at terminal',
      '10 suppression: episcope-ignore for model-error gives no reason: write it as "// episcope-ignore RULE: reason"; it suppresses nothing',
    ]);
    const partlyUnused = result.findings.find((f) => f.rule === 'suppression' && f.message.includes('trap-state'))!;
    expect(SPEC.slice(partlyUnused.span.start, partlyUnused.span.end)).toBe('trap-state');
  });

  it('offers a fix that deletes an unused comment line', () => {
    const text = 'a\n  // episcope-ignore trap-state: old reason\nb\n';
    const result = applySuppressions({ path: 'x.mdp.ts', text, findings: [], complete: true }, config(), KNOWN);
    expect(result.findings).toHaveLength(1);
    const fix = result.findings[0].fixes![0];
    const edit = fix.edits[0];
    expect(text.slice(0, edit.span.start) + edit.newText + text.slice(edit.span.end)).toBe('a\nb\n');
    expect(result.findings[0].tags).toEqual(['unnecessary']);
  });

  it('does not call comments unused when some rules did not run', () => {
    const text = '// episcope-ignore trap-state: reason\nx\n';
    const result = applySuppressions({ path: 'x.mdp.ts', text, findings: [], complete: false }, config(), KNOWN);
    expect(result.findings).toEqual([]);
  });

  it('names an unknown rule and honours the severity set for suppression', () => {
    const text = '// episcope-ignore reward-lop: typo\nx\n';
    const loud = applySuppressions(
      { path: 'x', text, findings: [], complete: true },
      config({ rules: { suppression: 'error' } }),
      KNOWN,
    );
    expect(loud.findings.map((f) => [f.severity, f.message])).toEqual([
      [
        'error',
        `episcope-ignore names no rule "reward-lop" (see 'episcope explain' for the rule ids); it suppresses nothing`,
      ],
    ]);
    const off = applySuppressions(
      { path: 'x', text, findings: [], complete: true },
      config({ rules: { suppression: 'off' } }),
      KNOWN,
    );
    expect(off.findings).toEqual([]);
  });
});

describe('config ignores', () => {
  const text = '{ "a": 1, "b": 2 }';
  const findings = [findingAt(text, 'reward-loop', '"a"'), findingAt(text, 'trap-state', '"b"')];
  const ignore = [
    { rule: 'reward-loop', path: 'specs/legacy/**', reason: 'kept as a teaching case' },
    { rule: '*', path: 'specs/{gen,tmp}/*.mdp.json', reason: 'generated' },
    { rule: 'trap-state', path: 'specs/nowhere.mdp.json', reason: 'stale' },
  ];
  const cfg = config({ ignore, baseDir: '/repo' });

  it('match by rule and path glob relative to the config folder', () => {
    const legacy = applySuppressions(
      { path: '/repo/specs/legacy/deep/a.mdp.json', text, findings, complete: true },
      cfg,
      KNOWN,
    );
    expect(legacy.findings.map((f) => f.rule)).toEqual(['trap-state']);
    expect(legacy.suppressed.map((s) => s.source)).toEqual([{ kind: 'config', ignoreIndex: 0 }]);
    const generated = applySuppressions(
      { path: '/repo/specs/gen/a.mdp.json', text, findings, complete: true },
      cfg,
      KNOWN,
    );
    expect(generated.findings).toEqual([]);
    const elsewhere = applySuppressions(
      { path: '/other/specs/gen/a.mdp.json', text, findings, complete: true },
      cfg,
      KNOWN,
    );
    expect(elsewhere.findings).toHaveLength(2);
  });

  it('are reported unused only when the files they match were all checked', () => {
    const spans = [
      { start: 10, end: 20 },
      { start: 30, end: 40 },
      { start: 50, end: 60 },
    ];
    const legacyUsed = {
      path: '/repo/specs/legacy/a.mdp.json',
      suppressed: [{ finding: findings[0], reason: 'r', source: { kind: 'config' as const, ignoreIndex: 0 } }],
      complete: true,
    };
    const genUnused = { path: '/repo/specs/gen/b.mdp.json', suppressed: [], complete: true };
    const all = unusedIgnoreFindings(cfg, spans, [legacyUsed, genUnused], true);
    expect(all.map((f) => [f.rule, f.span.start, f.message])).toEqual([
      [
        'suppression',
        30,
        'ignore[1] (any rule in "specs/{gen,tmp}/*.mdp.json") suppressed nothing in the 1 matching spec file: remove it',
      ],
      [
        'suppression',
        50,
        'ignore[2] (trap-state in "specs/nowhere.mdp.json") matches no spec file: correct its path or remove it',
      ],
    ]);
    // A run over part of the folder does not know about the files it did not check.
    expect(unusedIgnoreFindings(cfg, spans, [legacyUsed, genUnused], false).map((f) => f.span.start)).toEqual([30]);
    expect(unusedIgnoreFindings(cfg, spans, [legacyUsed, { ...genUnused, complete: false }], false)).toEqual([]);
  });
});

describe('paths and globs', () => {
  it('normalises and relativises', () => {
    expect(normalizePath('C:\\work\\specs\\..\\a.mdp.json')).toBe('c:/work/a.mdp.json');
    expect(normalizePath('./a//b/./c/')).toBe('a/b/c');
    expect(relativePath('/repo', '/repo/specs/a.mdp.json')).toBe('specs/a.mdp.json');
    expect(relativePath('/repo', '/repository/a.mdp.json')).toBeUndefined();
    expect(relativePath('/repo', 'specs/a.mdp.json')).toBeUndefined();
    expect(relativePath('.', 'specs/a.mdp.json')).toBe('specs/a.mdp.json');
  });

  it('matches globs', () => {
    const cases: Array<[string, string, boolean]> = [
      ['*.mdp.json', 'a.mdp.json', true],
      ['*.mdp.json', 'specs/a.mdp.json', false],
      ['**/*.mdp.json', 'specs/deep/a.mdp.json', true],
      ['**/*.mdp.json', 'a.mdp.json', true],
      ['specs', 'specs/deep/a.mdp.ts', true],
      ['specs/', 'specs/a.mdp.ts', true],
      ['spec', 'specs/a.mdp.ts', false],
      ['specs/?.mdp.ts', 'specs/a.mdp.ts', true],
      ['specs/?.mdp.ts', 'specs/ab.mdp.ts', false],
      ['specs/{a,b}.mdp.ts', 'specs/b.mdp.ts', true],
      ['specs/{a,b}.mdp.ts', 'specs/c.mdp.ts', false],
      ['./specs/a+b.mdp.ts', 'specs/a+b.mdp.ts', true],
    ];
    for (const [glob, path, expected] of cases)
      expect([glob, path, globMatches(glob, path)]).toEqual([glob, path, expected]);
  });
});
