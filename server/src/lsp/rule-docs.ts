/**
 * One Markdown page per rule, generated from the registry at build time into dist/docs/rules/, so
 * the pages an editor diagnostic links to (its `codeDescription`) always match the rules that run.
 */
import { mkdirSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { sourcesText, type DocumentedRule } from '../cli/explain';
import { CONFIG_RULE } from '../config-file';
import { RULES } from '../rules/registry';
import { SUPPRESSION_RULE } from '../suppress';

/** Every rule a finding can carry: the registry's and the two the fronts report (config, suppression). */
export function documentedRules(): DocumentedRule[] {
  return [...RULES, CONFIG_RULE, SUPPRESSION_RULE].sort((a, b) => a.id.localeCompare(b.id));
}

export function ruleMarkdown(rule: DocumentedRule): string {
  const lines = [
    `# ${rule.id}`,
    '',
    `Default severity: **${rule.defaultSeverity}**`,
    '',
    rule.summary,
    '',
    `Runs on: ${sourcesText(rule)}.`,
    '',
    rule.documentation.trim(),
  ];
  const thresholds = Object.entries(rule.thresholds ?? {});
  if (thresholds.length > 0) {
    lines.push(
      '',
      '## Thresholds',
      '',
      'Set in `episcope.config.json` under `"thresholds"`, or in the editor setting `episcope.thresholds`.',
      '',
    );
    lines.push('| key | default | why |', '|---|---|---|');
    for (const [name, spec] of thresholds) {
      lines.push(
        `| \`${rule.id}.${name}\` | ${spec.default} | ${spec.description.replace(/\|/g, '\\|').replace(/\n/g, ' ')} |`,
      );
    }
  }
  lines.push(
    '',
    '## Changing or ignoring it',
    '',
    `Severity: \`"rules": { "${rule.id}": "warning" }\` (or \`"off"\`) in \`episcope.config.json\`.`,
    `Ignore it for some files: \`"ignore": [{ "rule": "${rule.id}", "path": "specs/*.mdp.json", "reason": "…" }]\`;`,
    `or on one line: \`// episcope-ignore ${rule.id}: reason\` above it.`,
  );
  return `${lines.join('\n')}\n`;
}

/** Writes `<id>.md` for every rule and an index `README.md`; removes pages of rules that no longer exist. */
export function writeRuleDocs(folder: string): number {
  mkdirSync(folder, { recursive: true });
  const rules = documentedRules();
  const wanted = new Set(rules.map((r) => `${r.id}.md`).concat('README.md'));
  for (const name of readdirSync(folder)) {
    if (name.endsWith('.md') && !wanted.has(name)) rmSync(join(folder, name));
  }
  for (const rule of rules) writeFileSync(join(folder, `${rule.id}.md`), ruleMarkdown(rule));
  const index = [
    '# Episcope rules',
    '',
    '| rule | default | finds |',
    '|---|---|---|',
    ...rules.map((r) => `| [${r.id}](${r.id}.md) | ${r.defaultSeverity} | ${r.summary.replace(/\|/g, '\\|')} |`),
  ];
  writeFileSync(join(folder, 'README.md'), `${index.join('\n')}\n`);
  return rules.length;
}
