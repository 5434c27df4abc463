/**
 * Documentation that must not go stale: README.md's generated sections and quick-start commands,
 * and examples/README.md's account of what `episcope check` reports for each example.
 */
import { readFileSync, readdirSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import { CATALOG_RULE_IDS, renderRulesTable, updateReadme } from '../../scripts/readme-sections';
import { documentedRules } from '../../server/src/cli/main';
import { REPO_ROOT, cli } from './cli-harness';

const readme = readFileSync(path.join(REPO_ROOT, 'README.md'), 'utf8');
const examplesReadme = readFileSync(path.join(REPO_ROOT, 'examples', 'README.md'), 'utf8');
const design = (() => {
  // The design brief lives beside the repository (../shared/DESIGN.md) on the machines that have it.
  try {
    return readFileSync(path.join(REPO_ROOT, '..', 'shared', 'DESIGN.md'), 'utf8');
  } catch {
    return undefined;
  }
})();

describe('README.md', () => {
  it('has generated sections that match the rule registry and the option table (run `npm run docs:readme`)', () => {
    expect(updateReadme(readme)).toBe(readme);
  });

  it('lists every registered rule with its default severity, and no rule that is not registered as working', () => {
    const table = renderRulesTable();
    for (const rule of documentedRules()) expect(table).toContain(`| \`${rule.id}\` | ${rule.defaultSeverity} |`);
    const listed = [...table.matchAll(/^\| `([a-z-]+)` \|/gm)].map((m) => m[1]);
    expect(new Set(listed)).toEqual(new Set(documentedRules().map((r) => r.id)));
  });

  it.skipIf(!design)("knows the design brief's whole rule catalog", () => {
    const catalog = [...(design as string).matchAll(/^\| `([a-z-]+)` \| (?:error|warning|info)/gm)].map((m) => m[1]);
    expect(catalog.length).toBeGreaterThanOrEqual(30);
    expect([...CATALOG_RULE_IDS]).toEqual(catalog);
  });

  it('gives a newcomer exactly two commands: install and check the examples, and run every test', () => {
    const quickStart = readme.slice(
      readme.indexOf('## Quick start'),
      readme.indexOf('\n## ', readme.indexOf('## Quick start') + 1),
    );
    const commands = [...quickStart.matchAll(/```sh\n([\s\S]*?)```/g)].map((m) => m[1].trim());
    expect(commands).toEqual(['npm ci && npx episcope check examples', 'npm test']);
    const pkg = JSON.parse(readFileSync(path.join(REPO_ROOT, 'package.json'), 'utf8'));
    // npm ci runs `prepare`, which must build the bin that npx then runs.
    expect(pkg.scripts.prepare).toContain('scripts/bundle.mjs');
    expect(pkg.bin.episcope).toBe('dist/cli.js');
    expect(pkg.scripts.test).toMatch(/vitest run/);
  });

  it('carries the safety caution of the design brief', () => {
    const safety = readme.slice(readme.indexOf('## Safety')).replace(/\s+/g, ' ');
    for (const phrase of [
      'not that a trained policy is safe',
      'safety',
      'standards',
      'local codes',
      'licensed engineering practice',
      'simulation',
      'supervision',
    ]) {
      expect(safety).toContain(phrase);
    }
  });
});

/** Rows of the examples table: spec file name and the rule ids named in the last column. */
function documentedExamples(): Map<string, Set<string>> {
  const rows = new Map<string, Set<string>>();
  for (const line of examplesReadme.split('\n')) {
    const cells = line.split('|').map((c) => c.trim());
    const spec = /`([\w-]+\.mdp\.(?:json|ts))`/.exec(cells[1] ?? '')?.[1];
    if (!spec) continue;
    const reports = cells[cells.length - 2] ?? '';
    rows.set(spec, new Set([...reports.matchAll(/`([a-z-]+)`/g)].map((m) => m[1])));
  }
  return rows;
}

describe('examples/README.md', () => {
  const documented = documentedExamples();

  it('documents every example spec, says the numbers are invented, and has at least two clean and two buggy ones', () => {
    const files = readdirSync(path.join(REPO_ROOT, 'examples'))
      .filter((n) => /\.mdp\.(json|ts)$/.test(n))
      .sort();
    expect([...documented.keys()].sort()).toEqual(files);
    expect(examplesReadme).toMatch(/invented/i);
    const clean = [...documented.values()].filter((rules) => rules.size === 0).length;
    expect(clean).toBeGreaterThanOrEqual(2);
    expect(documented.size - clean).toBeGreaterThanOrEqual(2);
  });

  it('says exactly which rules `episcope check` reports for each example', async () => {
    const result = await cli(['check', 'examples', '--format', 'json']);
    const output = JSON.parse(result.stdout) as { files: Array<{ path: string; findings: Array<{ rule: string }> }> };
    for (const file of output.files) {
      const name = path.basename(file.path);
      const reported = new Set(file.findings.map((f) => f.rule));
      expect(reported, `${name}: update the examples table in examples/README.md`).toEqual(documented.get(name));
    }
  });
});
