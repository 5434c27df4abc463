/**
 * `episcope explain RULE`: a rule's documentation from the registry, with its thresholds, their
 * defaults and why the defaults are what they are. Without a rule: the list of rules.
 */
import { RULE_SOURCE_NAMES, RULE_SOURCES, type Rule } from '../rules/types';

// The suggestion lives in the core (the config file's validation uses it too).
export { suggestRules } from '../rules/suggest';

/**
 * What `explain` needs of a rule; front rules (e.g. `suppression`) have no check of their own and
 * no `sources`: they apply to the config file and comments of every spec.
 */
export type DocumentedRule = Pick<Rule, 'id' | 'defaultSeverity' | 'summary' | 'documentation' | 'thresholds'> &
  Partial<Pick<Rule, 'sources'>>;

/** The kinds of spec a rule fires on, in words ("JSON specs and enumerable TypeScript models"). */
export function sourcesText(rule: DocumentedRule): string {
  if (!rule.sources) return 'every spec (it checks the config file and ignore comments)';
  const names = RULE_SOURCES.filter((source) => rule.sources!.includes(source)).map(
    (source) => RULE_SOURCE_NAMES[source],
  );
  return names.length <= 1
    ? (names[0] ?? 'no spec')
    : `${names.slice(0, -1).join(', ')} and ${names[names.length - 1]}`;
}

export function explainRule(rule: DocumentedRule): string {
  const lines = [
    `${rule.id} (default severity: ${rule.defaultSeverity})`,
    '',
    rule.summary,
    '',
    `Runs on: ${sourcesText(rule)}.`,
    '',
    rule.documentation.trim(),
  ];
  const thresholds = Object.entries(rule.thresholds ?? {});
  if (thresholds.length > 0) {
    lines.push('', 'Thresholds (set in episcope.config.json under "thresholds"):');
    for (const [name, spec] of thresholds) {
      lines.push(`  ${rule.id}.${name} = ${spec.default}`, `    ${spec.description}`);
    }
  }
  return lines.join('\n') + '\n';
}

export function listRules(rules: readonly DocumentedRule[]): string {
  if (rules.length === 0) return 'No rules are registered.\n';
  const idWidth = Math.max(...rules.map((r) => r.id.length));
  const severityWidth = Math.max(...rules.map((r) => r.defaultSeverity.length));
  const rows = rules.map((r) => `  ${r.id.padEnd(idWidth)}  ${r.defaultSeverity.padEnd(severityWidth)}  ${r.summary}`);
  return (
    [
      'Rules (id, default severity, what it finds):',
      ...rows,
      '',
      "Run 'episcope explain RULE' for one rule's documentation.",
    ].join('\n') + '\n'
  );
}
