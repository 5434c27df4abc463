/**
 * `episcope explain RULE`: a rule's documentation from the registry, with its thresholds, their
 * defaults and why the defaults are what they are. Without a rule: the list of rules.
 */
import type { Rule } from '../rules/types';
import { editDistance } from '../spec/names';

/** What `explain` needs of a rule; front rules (e.g. `suppression`) have no check of their own. */
export type DocumentedRule = Pick<Rule, 'id' | 'defaultSeverity' | 'summary' | 'documentation' | 'thresholds'>;

export function explainRule(rule: DocumentedRule): string {
  const lines = [`${rule.id} (default severity: ${rule.defaultSeverity})`, '', rule.summary, '', rule.documentation.trim()];
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
  return ['Rules (id, default severity, what it finds):', ...rows, '', "Run 'episcope explain RULE' for one rule's documentation."].join('\n') + '\n';
}

/** The registered rule ids closest to a mistyped one (edit distance at most 3), best first. */
export function suggestRules(id: string, rules: readonly DocumentedRule[]): string[] {
  return rules
    .map((r) => ({ id: r.id, distance: editDistance(id, r.id, 3) }))
    .filter((r) => r.distance <= 3)
    .sort((a, b) => a.distance - b.distance || a.id.localeCompare(b.id))
    .slice(0, 3)
    .map((r) => r.id);
}
