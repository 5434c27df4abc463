import { reachableFromStart } from '../analysis/reachability';
import { stateName } from '../model/compiled';
import { quote } from '../load/names';
import { choiceSpan, describeStep, incompleteNote, stateSpan } from './incentive-text';
import type { RelatedLocation, Rule } from './types';

/** A non-terminal state that no policy reaches from the start. */
export const unreachableState: Rule = {
  id: 'unreachable-state',
  defaultSeverity: 'info',
  summary: 'No policy reaches the state from the start.',
  needs: 'graph',
  sources: ['json'],
  documentation: `
**Why it matters.** A state that no sequence of actions reaches from the start never appears in
an episode: its transitions never run and their rewards never count toward any return. Usually
that is a leftover from an edit, or a sign that a transition meant to lead there points
elsewhere (a typo in a \`to\`, a missing action), which would also change what the agent can
earn.

**When it fires.** A declared, non-terminal state is not reachable from any start state along
outcomes of positive probability, whatever the actions. (Unreachable terminals are reported by
\`unreachable-terminal\`.)

**How to fix.** Add the transition that should lead there, or delete the state and its
transitions if they are obsolete.

**Example.**
\`\`\`jsonc
"states": { "dock": {}, "annex": {} },   // nothing leads to 'annex'
\`\`\`
`.trim(),
  check(ctx) {
    const model = ctx.model;
    if (!model || model.startState.length === 0) return;
    const reachable = ctx.analysis?.reachable ?? reachableFromStart(model);
    const unreachable: number[] = [];
    for (let s = 0; s < model.stateCount; s++) if (!reachable[s] && model.terminal[s] === 0) unreachable.push(s);
    // A spec with thousands of dead states gets one finding each for the first ones and a count.
    const listed = unreachable.length > MAX_FINDINGS ? unreachable.slice(0, MAX_FINDINGS - 1) : unreachable;
    for (const s of listed) {
      const first = model.choiceStart[s];
      const count = model.choiceStart[s + 1] - first;
      const related: RelatedLocation[] = [];
      for (let c = first; c < first + count && related.length < 10; c++) {
        related.push({ span: choiceSpan(ctx.spec, model, c), message: `${describeStep(model, c)} never runs` });
      }
      const cost =
        count > 0
          ? `${count === 1 ? 'its transition never runs and its rewards never count' : `its ${count} transitions never run and their rewards never count`} toward any return`
          : 'it plays no part in any return';
      ctx.report({
        message: `${quote(stateName(model, s))} is never reached: no policy gets there from the start, so ${cost}${incompleteNote(ctx.incomplete)}`,
        span: stateSpan(ctx.spec, model, s),
        related,
        tags: ['unnecessary'],
      });
    }
    if (listed.length < unreachable.length) {
      const next = unreachable[listed.length];
      ctx.report({
        message: `${unreachable.length - listed.length} more states are never reached from the start (from ${quote(stateName(model, next))} on; not listed one by one)`,
        span: stateSpan(ctx.spec, model, next),
        tags: ['unnecessary'],
      });
    }
  },
};

/** Findings per spec, the last of them a count of the rest. */
const MAX_FINDINGS = 500;
