import type { Span } from '../load/types';
import type { Finding, Rule } from './types';

/**
 * `syntax`: a TypeScript spec is not valid TypeScript. Like `schema`, it is reported by the loader
 * (load/typescript.ts) while it reads the file; the registry lists it so that `explain`, the rule
 * table, the config and suppressions know it. JSON syntax errors stay `schema` findings.
 */
export const syntaxRule: Rule = {
  id: 'syntax',
  defaultSeverity: 'error',
  summary: 'A TypeScript spec has a syntax error, so its code is not run.',
  needs: 'spec',
  sources: ['enumerable', 'sampled'],
  documentation: `
**Why it matters.** A \`*.mdp.ts\` spec that the TypeScript parser cannot read has no well-defined
code to run: Episcope reports where the parser stopped and does not run the model, so no state is
enumerated, no rollout runs and no values are computed until it is fixed. The checks that read the
source (such as \`unseeded-randomness\`) still run on what could be parsed.

**When it fires.** The TypeScript parser reports an error: a missing bracket or comma, an unclosed
string, a keyword in the wrong place. At most 20 are reported per file, at the positions the parser
gives; the first one is usually the cause of the others.

**How to fix.** Follow the message at the first finding; your editor's TypeScript support shows the
same errors as you type. Type errors (as opposed to syntax errors) are not reported: Episcope does
not type-check model code.

**Example.**
\`\`\`ts
export default defineMdp({
  discount: 0.9,
  start: 0
  actions: () => ['go'],      // syntax: ',' expected
});
\`\`\`
`.trim(),
  check(): void {
    // Deliberately empty: the TypeScript loader reports this rule's findings.
  },
};

/** A `syntax` finding with the rule's default severity, as the TypeScript loader reports it. */
export function syntaxFinding(message: string, span: Span): Finding {
  return { rule: syntaxRule.id, severity: syntaxRule.defaultSeverity, message, span };
}
