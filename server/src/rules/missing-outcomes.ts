import { listNames, quote } from '../load/names';
import { forEachNonTerminalState, jsonEditorFor } from './spec-walk';
import type { Fix, Rule } from './types';

/** Every action a non-terminal state offers needs a transition that says what it does. */
export const missingOutcomes: Rule = {
  id: 'missing-outcomes',
  defaultSeverity: 'error',
  summary: 'A non-terminal state offers an action that has no transition.',
  needs: 'spec',
  sources: ['json'],
  documentation: `
**Why it matters.** A policy may choose any action its state offers. If no transition says what
an action does there, the MDP is undefined at that point: a simulator would crash, or fall
back to some default (stay put, reward 0) that nobody chose and that a learner may exploit.

**When it fires.** A non-terminal state offers an action (from its own \`actions\` or the
spec's default \`actions\`) and no transition has that state as \`from\` and that action as
\`action\`. One finding per state lists all its undefined actions. The spec is not compiled
until it is fixed. A transition that could not be read (its \`schema\` finding says why) counts as
defining the state and action it seems to be about, and a state whose \`terminal\` is not a
terminal kind counts as meant to be terminal, so one mistake is reported once.

**How to fix.** Add a transition for each listed action, or give the state its own narrower
\`actions\` list. The quick fix narrows the state's action set to the actions that have
transitions (check that this is what you meant: it removes the choice from the agent).

**Example.**
\`\`\`jsonc
"actions": ["north", "hover"],
"states": { "roof": {}, … },
"transitions": [ { "from": "roof", "action": "hover", "to": "roof" } ]   // 'roof' --north--> is missing
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    const defined = new Map<string, Set<string>>();
    for (const transition of spec.transitions) {
      let actions = defined.get(transition.from);
      if (!actions) defined.set(transition.from, (actions = new Set()));
      actions.add(transition.action);
    }
    const unread = spec.unreadTransitions ?? [];
    const editor = jsonEditorFor(ctx);
    forEachNonTerminalState(spec, (state, offered) => {
      // A state without any action is dead-end's finding.
      if (!offered || offered.length === 0) return;
      const has = defined.get(state.id);
      // A transition that could not be read is its schema finding; saying again that its pair
      // has no transition would bury the cause.
      const missing = offered.filter(
        (action) =>
          !has?.has(action) &&
          !unread.some((u) => (!u.from || u.from.includes(state.id)) && (!u.action || u.action.includes(action))),
      );
      if (missing.length === 0) return;
      const present = offered.filter((action) => !missing.includes(action));
      const them = missing.length === 1 ? 'it does' : 'they do';
      const fixes: Fix[] = [];
      if (present.length > 0) {
        const edits = editor?.setProperty(['states', state.id], 'actions', present);
        if (edits) fixes.push({ title: `Narrow the actions of ${quote(state.id)} to ${listNames(present)}`, edits });
      }
      ctx.report({
        message:
          `${quote(state.id)} offers ${listNames(missing)}, but no transition says what ${them} there: ` +
          `a policy may take ${missing.length === 1 ? 'it' : 'them'}, so the MDP is undefined at ${quote(state.id)} and the spec is not compiled`,
        span: state.span,
        fixes,
      });
    });
  },
};
