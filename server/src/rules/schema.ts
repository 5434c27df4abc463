import type { Span } from '../load/types';
import type { Finding, Rule } from './types';

/**
 * `schema`: the document does not match the spec format (schemas/mdp.schema.json).
 *
 * This rule is checked by the loaders, not by `check`: a document that does not match the schema
 * cannot be turned into a ParsedSpec in the first place, so the JSON loader (load/json.ts) and the
 * TypeScript loader validate while they read and build their findings with `schemaFinding` below.
 * analyze.ts merges those findings and applies the configured severity (or "off"). The registry
 * lists this rule so that `episcope explain schema`, the rule table and config validation know it;
 * its `check` has nothing left to do when the pipeline calls it.
 */
export const schemaRule: Rule = {
  id: 'schema',
  defaultSeverity: 'error',
  summary: 'The document does not match the spec format (JSON Schema of format version 1).',
  needs: 'spec',
  sources: ['json', 'enumerable', 'sampled'],
  documentation: `
The spec must follow the spec format, version 1 (\`schemas/mdp.schema.json\`, JSON Schema 2020-12):
an object with \`discount\`, \`start\`, \`states\` and \`transitions\`, and optionally \`name\`,
\`objective\`, \`horizon\`, \`actions\`, \`rewardTerms\` and \`shaping\`.

**Why it matters.** A misspelt or misplaced field is silently meaningless: \`"discont": 0.9\` leaves
the spec without a discount, \`"terminal": "gaol"\` leaves a state non-terminal, and an outcome
without a probability has no defined distribution. Episcope reads what it can and runs every
check that does not depend on the broken part, but the values cannot be trusted until the
document matches the format.

**When it fires.**
- The text is not valid JSON (comments and trailing commas are allowed).
- A required field is missing, a field has the wrong type (e.g. a string where a number belongs),
  or a value is not one of the allowed ones (\`objective\`, \`terminal\`, \`direction\`).
- A field is unknown (the message suggests the closest known one), or an object has the same key twice
  (only the last one counts, as in JSON.parse).
- \`discount\` is outside [0, 1], \`horizon\` is not a whole number of at least 1, a list has the
  same entry twice, or a reward names a term that \`rewardTerms\` does not declare.
- The document is nested more deeply than any spec can be, or is too large to read.

Probabilities outside [0, 1] and non-finite rewards have their own rules
(\`negative-probability\`, \`non-finite-reward\`) and are not reported twice.

**How to fix.** Follow the message: it names the path (such as \`transitions[3].to\`) and what is
expected there. Add \`"$schema"\` pointing at \`schemas/mdp.schema.json\` to get completion and
hover documentation in any JSON editor.

**Example.**
\`\`\`jsonc
{ "discount": 0.95, "start": "depot",
  "states": { "depot": {}, "drop": { "terminal": "gaol" } },   // schema: must be "goal", "failure" or "neutral"
  "transitions": [ { "from": "depot", "action": "fly", "too": "drop" } ] }   // schema: unknown property "too"
\`\`\`
`,
  check(): void {
    // Deliberately empty: the loaders report this rule's findings (see the comment above).
  },
};

/** A `schema` finding with the rule's default severity, as the loaders report it. */
export function schemaFinding(message: string, span: Span): Finding {
  return { rule: schemaRule.id, severity: schemaRule.defaultSeverity, message, span };
}
