import { closestName, quote } from '../load/names';
import type { Span } from '../load/types';
import { forEachOutcome, jsonEditorFor, malformedCost, renameFix, transitionLabel } from './spec-walk';
import type { JsonEditor } from './json-edits';
import type { Fix, Rule } from './types';

/**
 * Every state a transition, the start or the shaping potential names must be declared in
 * `states`: an undeclared id is almost always a typo, and the MDP is undefined until it is fixed.
 */
export const undeclaredState: Rule = {
  id: 'undeclared-state',
  defaultSeverity: 'error',
  summary: 'A transition, the start or the shaping potential names a state that is not declared.',
  needs: 'spec',
  sources: ['json'],
  documentation: `
**Why it matters.** Every state must be declared in \`states\`. A transition that leads to
\`"rooof"\` instead of \`"roof"\` does not create a new state in Episcope: it leaves the MDP
undefined, because nothing says whether \`"rooof"\` is terminal or what its actions do. In
hand-written environments the same typo silently creates a state that nothing ever leaves or that
no code handles, which shows up only as odd returns after hours of training.

**When it fires.** A \`from\`, a \`to\` (any of its three forms), the \`start\` or a key of
\`shaping.potential\` names a state that \`states\` does not declare. Until the finding is fixed,
the spec is not compiled and no values are computed.

**How to fix.** Correct the name (the message suggests the closest declared id when the name
looks like a typo of one) or declare the state. Both are offered as quick fixes.

**Example.**
\`\`\`jsonc
"states": { "depot": {}, "roof": {}, "drop": { "terminal": "goal" } },
"transitions": [ { "from": "depot", "action": "north", "to": "rooof" } ]   // did you mean 'roof'?
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    // Without any declared state the schema finding about "states" says everything.
    if (spec.states.length === 0) return;
    const declared = new Set(spec.states.map((s) => s.id));
    const reported = new Set<number>();
    const editor = jsonEditorFor(ctx);
    // `where` and `cost` may be functions: a spec's outcomes are many and nearly all declared, so
    // their messages are only built for the names that are reported.
    const flag = (
      name: string,
      span: Span,
      whereText: string | (() => string),
      costText: string | (() => string),
    ): void => {
      if (declared.has(name) || reported.has(span.start)) return;
      reported.add(span.start);
      const where = typeof whereText === 'string' ? whereText : whereText();
      const cost = typeof costText === 'string' ? costText : costText();
      const suggestion = closestName(name, declared);
      const advice = suggestion ? ` (did you mean ${quote(suggestion)}?)` : '';
      ctx.report({
        message: `${where} ${quote(name)}, which is not declared in "states"${advice}: ${cost}`,
        span,
        fixes: fixesFor(ctx.text, editor, name, span, suggestion),
      });
    };
    for (const transition of spec.transitions) {
      flag(
        transition.from,
        transition.fromSpan,
        `transitions[${transition.sourceIndex}] leaves`,
        'the transition belongs to no state, so the MDP is undefined and no values are computed',
      );
    }
    forEachOutcome(spec, (outcome, transition) => {
      flag(
        outcome.state,
        outcome.stateSpan,
        () => `${transitionLabel(spec, transition)} leads to`,
        () =>
          malformedCost(
            spec,
            transition,
            'episodes that take it have no next state, so the MDP is undefined and no values are computed',
          ),
      );
    });
    for (const entry of spec.start) {
      flag(entry.state, entry.span, 'the start names', 'episodes may begin nowhere, so no values are computed');
    }
    for (const entry of spec.potential) {
      flag(
        entry.state,
        entry.span,
        'shaping.potential names',
        'the potential belongs to no state (a typo here silently changes the shaping), so the spec is not compiled',
      );
    }
  },
};

function fixesFor(
  text: string,
  editor: JsonEditor | undefined,
  name: string,
  span: Span,
  suggestion: string | undefined,
): Fix[] {
  const fixes: Fix[] = [];
  const rename = suggestion ? renameFix(text, span, suggestion) : undefined;
  if (rename) fixes.push(rename);
  const declare = editor?.addProperty(['states'], name, {});
  if (declare) fixes.push({ title: `Declare the state ${quote(name)}`, edits: declare });
  return fixes;
}
