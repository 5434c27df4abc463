import { listNames, quote } from '../load/names';
import type { ParsedSpec } from '../load/types';
import { TERMINAL_KINDS } from '../load/types';
import { forEachNonTerminalState, jsonEditorFor } from './spec-walk';
import { describeCall } from './model-error';
import type { Fix, Rule, RuleContext } from './types';

/** A non-terminal state must offer at least one action, or the episode has no way to go on. */
export const deadEnd: Rule = {
  id: 'dead-end',
  defaultSeverity: 'error',
  summary: 'A non-terminal state offers no action at all.',
  needs: 'spec',
  sources: ['json', 'enumerable', 'sampled'],
  documentation: `
**Why it matters.** An episode that enters a non-terminal state must continue: the agent picks
one of the state's actions. A state with no action is neither an end nor a step, so the MDP is
undefined there. In code this is the classic "the environment returns no valid actions but
\`done\` is false" bug, which stalls rollouts or crashes the learner at run time.

**When it fires.** A state without \`"terminal"\` has an empty \`actions\` list, or has none of
its own while the spec declares no default \`actions\`. The spec is not compiled until it is
fixed. In a TypeScript model: \`actions(state)\` returns an empty list for a state that
\`terminal\` does not end (reported at \`actions\`, with the state).

When no state and not the spec declare any \`actions\` at all, that one omission is reported
once, at the spec, with a fix that declares the actions its transitions use.

**How to fix.** Give the state actions and transitions, or mark it terminal with the kind of
end it is: \`"goal"\`, \`"failure"\` or \`"neutral"\` (offered as quick fixes).

**Example.**
\`\`\`jsonc
"states": { "dock": { "actions": [] }, … }   // 'dock' is not terminal but offers nothing
\`\`\`
`.trim(),
  check(ctx) {
    const spec = ctx.spec;
    for (const problem of spec.typescript?.structuralProblems ?? []) {
      if (problem.kind !== 'dead-end') continue;
      const where = problem.elsewhere ? ` (at ${problem.elsewhere})` : '';
      ctx.report({
        message: `${describeCall(problem)} returned no action, and terminal() does not call that state terminal${where}: an episode that enters it can neither continue nor end, so the MDP is undefined there and no values are computed`,
        span: problem.span,
      });
    }
    const editor = jsonEditorFor(ctx);
    if (declaresNoActions(spec)) {
      reportNoActionsAnywhere(ctx, editor);
      return;
    }
    forEachNonTerminalState(spec, (state, offered) => {
      if (offered && offered.length > 0) return;
      const why = offered ? 'its "actions" list is empty' : 'neither it nor the spec declares "actions"';
      const fixes: Fix[] = [];
      for (const kind of TERMINAL_KINDS) {
        const edits = editor?.setProperty(['states', state.id], 'terminal', kind);
        if (edits) fixes.push({ title: `Mark ${quote(state.id)} as a ${kind} terminal`, edits });
      }
      ctx.report({
        message: `${quote(state.id)} is not terminal but offers no action (${why}): an episode that enters it can neither continue nor end, so the MDP is undefined there and the spec is not compiled`,
        span: state.span,
        related: state.actionsSpan
          ? [{ span: state.actionsSpan, message: `the empty action set of ${quote(state.id)}` }]
          : undefined,
        fixes,
      });
    });
  },
};

/** Neither the spec nor any state has an action set, though some state is not terminal. */
function declaresNoActions(spec: ParsedSpec): boolean {
  // TypeScript specs give actions by a function; their dead ends come from running it.
  if (spec.format !== 'json' || spec.actionsSpan !== undefined || spec.actions.length > 0) return false;
  return (
    spec.states.every((state) => state.actions === undefined) &&
    spec.states.some((state) => !state.terminal && !state.terminalUnread)
  );
}

/** One finding for the one omission, instead of one per state; the fix declares what the transitions use. */
function reportNoActionsAnywhere(ctx: RuleContext, editor: ReturnType<typeof jsonEditorFor>): void {
  const spec = ctx.spec;
  const used = [...new Set(spec.transitions.map((t) => t.action))];
  const fixes: Fix[] = [];
  const edits = used.length > 0 ? editor?.setProperty([], 'actions', used) : undefined;
  if (edits) fixes.push({ title: `Declare "actions": ${JSON.stringify(used)}`, edits });
  const hint = used.length > 0 ? ` (the transitions use ${listNames(used)})` : '';
  const states = spec.states.filter((state) => !state.terminal && !state.terminalUnread).length;
  ctx.report({
    message:
      `no state offers an action: neither the spec nor any state declares "actions"${hint}, so ${states === 1 ? 'the non-terminal state is a dead end' : `all ${states} non-terminal states are dead ends`} ` +
      `and the spec is not compiled; give the spec a default "actions" list (or each state its own)`,
    span: { start: spec.rootSpan.start, end: Math.min(spec.rootSpan.end, spec.rootSpan.start + 1) },
    fixes,
  });
}
