/**
 * The parts of README.md that are generated, so that they never go stale: the rules table (from
 * the registry) and the command-line usage (from the option table). test/cli/readme.test.ts fails
 * when README.md differs from what this renders; `npm run docs:readme` rewrites those parts.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import type { DocumentedRule } from '../server/src/cli/explain';
import { documentedRules, usageFor } from '../server/src/cli/run';
import { RULE_SOURCES, type RuleSource } from '../server/src/rules/types';

/** Rule ids of the design's catalog, version 1, in catalog order (the order the table uses). */
export const CATALOG_RULE_IDS: readonly string[] = [
  'schema',
  'undeclared-state',
  'undeclared-action',
  'probability-sum',
  'negative-probability',
  'missing-outcomes',
  'dead-end',
  'terminal-has-transitions',
  'duplicate-transition',
  'unreachable-state',
  'unreachable-terminal',
  'trap-state',
  'unbounded-return',
  'reward-loop',
  'failure-preferred',
  'living-reward',
  'objective-sign',
  'term-direction',
  'shaping-not-potential',
  'terminal-potential',
  'shaping-changes-policy',
  'goal-discounted-away',
  'horizon-too-short',
  'time-dependent-optimum',
  'reward-scale',
  'tiny-probability',
  'enumeration-limit',
  'model-error',
  'non-finite-reward',
  'unseeded-randomness',
  'nondeterministic-model',
  'episode-never-ends',
];

/** The kinds of spec a rule fires on, short: "JSON, TS enumerable, TS sampled". */
function sourcesCell(rule: DocumentedRule): string {
  if (!rule.sources) return 'all (config and comments)';
  const short: Record<RuleSource, string> = { json: 'JSON', enumerable: 'TS enumerable', sampled: 'TS sampled' };
  return RULE_SOURCES.filter((source) => rule.sources!.includes(source))
    .map((source) => short[source])
    .join(', ');
}

function escapeCell(text: string): string {
  return text.replace(/\|/g, '\\|').replace(/\s*\n\s*/g, ' ');
}

/** The Markdown table of the rules that run, and a line naming the catalog's rules that do not yet. */
export function renderRulesTable(): string {
  const rules = documentedRules();
  const order = (id: string) => {
    const i = CATALOG_RULE_IDS.indexOf(id);
    return i < 0 ? CATALOG_RULE_IDS.length : i;
  };
  const sorted = [...rules].sort((a, b) => order(a.id) - order(b.id) || a.id.localeCompare(b.id));
  const lines = ['| rule | default | finds | runs on |', '|---|---|---|---|'];
  for (const rule of sorted)
    lines.push(`| \`${rule.id}\` | ${rule.defaultSeverity} | ${escapeCell(rule.summary)} | ${sourcesCell(rule)} |`);
  const implemented = new Set(rules.map((r) => r.id));
  const planned = CATALOG_RULE_IDS.filter((id) => !implemented.has(id));
  if (planned.length > 0) {
    lines.push('', `Planned, in the catalog but not implemented yet: ${planned.map((id) => `\`${id}\``).join(', ')}.`);
  }
  return lines.join('\n');
}

/** `episcope --help` and `episcope check --help`, as shown in the README. */
export function renderCliUsage(): string {
  return ['```text', usageFor().trimEnd(), '```', '', '```text', usageFor('check').trimEnd(), '```'].join('\n');
}

export const GENERATED_SECTIONS: Record<string, () => string> = {
  'rules-table': renderRulesTable,
  'cli-usage': renderCliUsage,
};

/** Replaces the text between `<!-- NAME:start -->` and `<!-- NAME:end -->` for every generated section. */
export function updateReadme(readme: string): string {
  let out = readme;
  for (const [name, render] of Object.entries(GENERATED_SECTIONS)) {
    const start = `<!-- ${name}:start -->`;
    const end = `<!-- ${name}:end -->`;
    const i = out.indexOf(start);
    const j = out.indexOf(end);
    if (i < 0 || j < i) throw new Error(`README.md has no ${start} ... ${end} markers`);
    out = `${out.slice(0, i + start.length)}\n${render()}\n${out.slice(j)}`;
  }
  return out;
}

/** Runs when bundled and executed by `npm run docs:readme`. */
function main(): void {
  const file = path.resolve(__dirname, '..', '..', 'README.md');
  const before = readFileSync(file, 'utf8');
  const after = updateReadme(before);
  if (after !== before) writeFileSync(file, after);
  process.stdout.write(after !== before ? 'README.md: generated sections updated\n' : 'README.md: up to date\n');
}

if (typeof require !== 'undefined' && typeof module !== 'undefined' && require.main === module) main();
