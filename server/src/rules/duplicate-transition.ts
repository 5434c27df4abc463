import { arrow } from '../load/names';
import { LineIndex } from '../load/lines';
import type { SpecTransition } from '../load/types';
import { expansionsOf, jsonEditorFor, writtenTransitions } from './spec-walk';
import type { Fix, RelatedLocation, Rule } from './types';

/** Each (state, action) pair is defined once; a second definition is silently ignored. */
export const duplicateTransition: Rule = {
  id: 'duplicate-transition',
  defaultSeverity: 'warning',
  summary: 'The same (state, action) pair is defined by more than one transition.',
  needs: 'spec',
  sources: ['json'],
  documentation: `
**Why it matters.** A (state, action) pair has one distribution of outcomes. When two
transitions define the same pair, Episcope uses the first and ignores the rest, so edits to the
later one change nothing, and a reviewer reading the later one sees dynamics the model does not
have. Often the second was meant for another state or action (a copy-paste slip).

**When it fires.** A transition defines a (\`from\`, \`action\`) pair that an earlier transition
already defines (lists in \`from\` and \`action\` count per pair). Transitions out of terminal
states are left to \`terminal-has-transitions\`.

**How to fix.** Delete the later transition (quick fix when all its pairs are duplicates and it is
therefore unused), or correct its \`from\` or \`action\`. If the later one is the right one, delete
the earlier one instead.

**Example.**
\`\`\`jsonc
{ "from": "roof", "action": "hover", "to": "roof", "reward": -1 },
{ "from": "roof", "action": "hover", "to": { "roof": 0.8, "crash": 0.2 } }   // ignored: the first one wins
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    const terminal = new Set(spec.states.filter((s) => s.terminal).map((s) => s.id));
    // By state, then action: the loader's names are shared strings whose hashes are kept, where
    // a joined key would be a new string to build and hash for every transition.
    const first = new Map<string, Map<string, SpecTransition>>();
    const duplicatesBySource = new Map<number, Array<{ pair: SpecTransition; earlier: SpecTransition }>>();
    for (const transition of spec.transitions) {
      if (terminal.has(transition.from)) continue;
      let byAction = first.get(transition.from);
      if (!byAction) first.set(transition.from, (byAction = new Map()));
      const earlier = byAction.get(transition.action);
      if (!earlier) {
        byAction.set(transition.action, transition);
        continue;
      }
      // A pair repeated inside one transition's own lists is a schema finding (uniqueItems).
      if (earlier.sourceIndex === transition.sourceIndex) continue;
      const list = duplicatesBySource.get(transition.sourceIndex);
      if (list) list.push({ pair: transition, earlier });
      else duplicatesBySource.set(transition.sourceIndex, [{ pair: transition, earlier }]);
    }
    if (duplicatesBySource.size === 0) return;
    const lines = new LineIndex(ctx.text);
    const lineOf = (t: SpecTransition): number => lines.position(t.span.start).line + 1;
    const editor = jsonEditorFor(ctx);
    for (const written of writtenTransitions(spec)) {
      const duplicates = duplicatesBySource.get(written.sourceIndex);
      if (!duplicates) continue;
      const pairs = expansionsOf(spec, written.sourceIndex);
      const wholeIsDuplicate = duplicates.length === pairs.length;
      const described = duplicates.map(
        ({ pair, earlier }) =>
          `${arrow(pair.from, pair.action)} (first defined by transitions[${earlier.sourceIndex}], line ${lineOf(earlier)})`,
      );
      const shown = described.length > 4 ? [...described.slice(0, 4), `${described.length - 4} more`] : described;
      const cost = wholeIsDuplicate
        ? 'this transition is never used: the first definition wins, so edits here change nothing'
        : 'for these pairs this transition is never used: the first definition wins';
      const related: RelatedLocation[] = [];
      for (const { earlier } of duplicates) {
        if (!related.some((r) => r.span.start === earlier.span.start))
          related.push({ span: earlier.span, message: `first definition (transitions[${earlier.sourceIndex}])` });
      }
      const fixes: Fix[] = [];
      if (wholeIsDuplicate) {
        const edits = editor?.removeArrayItem(['transitions'], written.sourceIndex);
        if (edits) fixes.push({ title: `Delete transitions[${written.sourceIndex}] (it is never used)`, edits });
      }
      ctx.report({
        message: `transitions[${written.sourceIndex}] defines ${shown.length === 1 ? shown[0] : listPlain(shown)} again: ${cost}`,
        span: written.span,
        tags: wholeIsDuplicate ? ['unnecessary'] : undefined,
        related,
        fixes,
      });
    }
  },
};

function listPlain(items: readonly string[]): string {
  return `${items.slice(0, -1).join(', ')} and ${items[items.length - 1]}`;
}
