import { listNames, quote } from '../load/names';
import type { SpecState } from '../load/types';
import { expansionsOf, jsonEditorFor } from './spec-walk';
import type { Fix, Rule } from './types';

/** Entering a terminal ends the episode, so transitions out of it are never taken. */
export const terminalHasTransitions: Rule = {
  id: 'terminal-has-transitions',
  defaultSeverity: 'warning',
  summary: 'A terminal state has transitions (they are never taken).',
  needs: 'spec',
  sources: ['json'],
  documentation: `
**Why it matters.** Entering a terminal state ends the episode; its value is 0 and nothing after
it counts. A transition out of a terminal is dead text, and usually a sign of a mistake: either
the state was marked terminal by accident (and the episode ends earlier than intended, dropping
whatever the transition would have paid), or the transition was meant for another state.

**When it fires.** A transition's \`from\` (or an entry of a \`from\` list) is a terminal state.
The analysis ignores the transition; the finding is marked as unnecessary code so editors fade it.

**How to fix.** Delete the transition (quick fix when its whole \`from\` is terminal), or remove
\`"terminal"\` from the state if the episode should go on there.

**Example.**
\`\`\`jsonc
"states": { "drop": { "terminal": "goal" }, … },
"transitions": [ { "from": "drop", "action": "hover", "to": "drop", "reward": 1 } ]   // never taken
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    const terminals = new Map<string, SpecState>();
    for (const state of spec.states) if (state.terminal && !terminals.has(state.id)) terminals.set(state.id, state);
    if (terminals.size === 0) return;
    // Only the written transitions with a pair out of a terminal are looked at (in document order):
    // a per-transition list of pairs would cost an allocation for each of a large spec's transitions.
    const flagged = new Set<number>();
    for (const pair of spec.transitions) if (terminals.has(pair.from)) flagged.add(pair.sourceIndex);
    if (flagged.size === 0) return;
    const editor = jsonEditorFor(ctx);
    for (const sourceIndex of [...flagged].sort((a, b) => a - b)) {
      const pairs = expansionsOf(spec, sourceIndex);
      const written = pairs[0];
      const terminalPairs = pairs.filter((t) => terminals.has(t.from));
      const states = [...new Set(terminalPairs.map((t) => t.from))];
      const kinds = states.map((id) => `${quote(id)} is a ${terminals.get(id)!.terminal} terminal`).join(', ');
      const cost =
        'entering a terminal ends the episode, so this transition is never taken and its outcomes and rewards count for nothing';
      const related = states.map((id) => ({
        span: terminals.get(id)!.terminalSpan ?? terminals.get(id)!.span,
        message: `${quote(id)} is declared terminal here`,
      }));
      if (terminalPairs.length === pairs.length) {
        const fixes: Fix[] = [];
        const edits = editor?.removeArrayItem(['transitions'], written.sourceIndex);
        if (edits) fixes.push({ title: `Delete transitions[${written.sourceIndex}]`, edits });
        ctx.report({ message: `${kinds}: ${cost}`, span: written.span, tags: ['unnecessary'], related, fixes });
        continue;
      }
      // Only some entries of a `from` list are terminal: point at each of them.
      const reported = new Set<number>();
      for (const pair of terminalPairs) {
        if (reported.has(pair.fromSpan.start)) continue;
        reported.add(pair.fromSpan.start);
        const state = terminals.get(pair.from)!;
        ctx.report({
          message: `${quote(state.id)} is a ${state.terminal} terminal: entering it ends the episode, so transitions[${written.sourceIndex}] is never taken from it (it still applies to ${listNames([...new Set(pairs.filter((t) => !terminals.has(t.from)).map((t) => t.from))])})`,
          span: pair.fromSpan,
          tags: ['unnecessary'],
          related: [
            { span: state.terminalSpan ?? state.span, message: `${quote(state.id)} is declared terminal here` },
          ],
        });
      }
    }
  },
};
