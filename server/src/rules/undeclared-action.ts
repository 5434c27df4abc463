import { actionSetOf } from '../model/compile';
import { closestName, listNames, quote } from '../load/names';
import type { SpecState, SpecTransition } from '../load/types';
import { jsonEditorFor, renameFix } from './spec-walk';
import type { Fix, Rule } from './types';

/**
 * A transition must use an action that its state offers (the state's own `actions`, else the
 * spec's). Otherwise the transition is dead text and the action it was meant to define is missing.
 */
export const undeclaredAction: Rule = {
  id: 'undeclared-action',
  defaultSeverity: 'error',
  summary: "A transition names an action that is not in its state's action set.",
  needs: 'spec',
  sources: ['json'],
  documentation: `
**Why it matters.** A state's action set is its own \`actions\` list, or else the spec's top-level
\`actions\`. A transition for an action outside that set can never be chosen by any policy: it
is usually a misspelt action (\`"hovr"\`), or a transition written for a state that narrowed its
set. Either way what the author meant the action to do is not in the model.

**When it fires.** A transition's \`action\` (or one entry of an \`action\` list) is not in the
action set of its \`from\` state. Transitions out of undeclared or terminal states are left to
\`undeclared-state\` and \`terminal-has-transitions\`, and states without any action set to
\`dead-end\`. The spec is not compiled until the finding is fixed.

**How to fix.** Correct the action name (the message suggests the closest offered action when
the name looks like a typo), or add the action to the state's \`actions\`. Both are quick fixes
where they apply.

**Example.**
\`\`\`jsonc
"actions": ["north", "hover"],
"states": { "roof": { "actions": ["hover"] }, … },
"transitions": [ { "from": "roof", "action": "north", "to": "depot" } ]   // 'roof' offers only 'hover'
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    const stateById = new Map<string, SpecState>();
    for (const state of spec.states) if (!stateById.has(state.id)) stateById.set(state.id, state);
    const defaultSet = new Set(spec.actions.map((a) => a.value));
    // One finding per written action name, listing every state of a `from` list that lacks it.
    const groups = new Map<number, { transition: SpecTransition; states: SpecState[] }>();
    for (const transition of spec.transitions) {
      const state = stateById.get(transition.from);
      if (!state || state.terminal) continue;
      const offered = actionSetOf(spec, state);
      if (!offered || offered.length === 0 || offered.includes(transition.action)) continue;
      const group = groups.get(transition.actionSpan.start);
      if (group) {
        if (!group.states.includes(state)) group.states.push(state);
      } else {
        groups.set(transition.actionSpan.start, { transition, states: [state] });
      }
    }
    const editor = groups.size > 0 ? jsonEditorFor(ctx) : undefined;
    for (const { transition, states } of groups.values()) {
      const action = transition.action;
      const first = states[0];
      const offered = actionSetOf(spec, first) ?? [];
      const suggestion = closestName(action, offered);
      const offeredByAll = suggestion !== undefined && states.every((s) => actionSetOf(spec, s)?.includes(suggestion));
      const advice = offeredByAll ? ` (did you mean ${quote(suggestion)}?)` : '';
      const whose =
        states.length === 1
          ? `${quote(first.id)} (it offers ${listNames(offered)})`
          : listNames(states.map((s) => s.id));
      const message =
        `${quote(action)} is not an action of ${whose}${advice}: no policy can take it there, so transitions[${transition.sourceIndex}] is never used ` +
        'and the spec is not compiled until the action is offered or renamed';

      const fixes: Fix[] = [];
      const rename = offeredByAll ? renameFix(ctx.text, transition.actionSpan, suggestion) : undefined;
      if (rename) fixes.push(rename);
      // Adding the action is sound where the state narrowed the default set that already has it.
      if (states.length === 1 && first.actions && defaultSet.has(action)) {
        const edits = editor?.appendToArray(['states', first.id, 'actions'], action);
        if (edits) fixes.push({ title: `Add ${quote(action)} to the actions of ${quote(first.id)}`, edits });
      }
      ctx.report({
        message,
        span: transition.actionSpan,
        related: first.actionsSpan
          ? [{ span: first.actionsSpan, message: `the action set of ${quote(first.id)}` }]
          : undefined,
        fixes,
      });
    }
  },
};
