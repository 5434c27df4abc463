import { formatNumber } from '../load/names';
import { stateName, type CompiledModel } from '../model/compiled';
import { recoverPotential, type PotentialConflict, type ShapingStep } from '../analysis/shaping';
import { actionOf, describeStep, formatAmount, formatSigned, outcomeSpan } from './incentive-text';
import type { RelatedLocation, Rule, TraceStep } from './types';
import type { ParsedSpec } from '../load/types';

export const shapingNotPotential: Rule = {
  id: 'shaping-not-potential',
  defaultSeverity: 'warning',
  summary: 'The reward terms marked `shaping` cannot be written as discount*Phi(next) - Phi(state).',
  needs: 'model',
  sources: ['json', 'enumerable', 'sampled'],
  thresholds: {
    tolerance: {
      default: 1e-9,
      description:
        'Relative tolerance of each equation discount*Phi(next) - Phi(state) = amount, relative to the largest ' +
        'shaping amount or potential involved (at least 1). 1e-9 absorbs binary rounding of decimal numbers ' +
        'and of the discount while still catching any amount a person would write differently. Raise it ' +
        '(for example to 1e-4) if you write shaping amounts rounded to a few digits by hand.',
    },
  },
  documentation: `
**What it finds.** Shaping rewards speed up learning without changing what is optimal only when they are
*potential-based*: F(s, a, s') = discount * Phi(s') - Phi(s) for some function Phi of the state (Ng, Harada
and Russell, 1999, Theorem 1). Any other "progress" bonus can be farmed: a policy that walks back and forth
across a rewarded step collects the bonus on every lap. This rule decides exactly (up to the tolerance below)
whether the terms you marked \`"shaping": true\` in \`rewardTerms\` have that form.

**How it decides.** Every outcome with positive probability is one equation discount*Phi(s') - Phi(s) = F,
where F is the sum of the shaping terms on that outcome (0 where none is written: those outcomes count
too). Terminals get Phi = 0, the episodic convention under which shaping cannot change the optimal policy
(a potential on a terminal is never paid back; see terminal-potential). The equations are solved along a
spanning tree of each connected part of the transition graph and every other outcome is checked against
the result. With discount < 1 a part without terminals is fixed by going once around one of its loops.

**When it fires.** Some outcome contradicts the potential the rest implies. The message gives two
derivations of Phi at one state that disagree, step by step with the amounts; with discount 1 they close a
cycle and the message gives the net shaping around it (a potential nets 0 around every cycle, so this is
what a policy gains per lap). The trace lists the same transitions so that each action leads to the state
listed next; where the route goes against a transition, the trace breaks there and goes on from the
transition's own state. When the terms are potential-based, nothing is reported and the recovered
Phi is shown on hover.

**Fix.** Compute the shaping from a potential: give each state a Phi and pay discount*Phi(s') - Phi(s), or
move the shaping into \`shaping.potential\`, which Episcope turns into exactly that.
`.trim(),
  check(ctx) {
    const model = ctx.model;
    if (!model) return;
    if (!ctx.spec.rewardTerms.some((t) => t.shaping)) return;
    const recovery = recoverPotential(ctx.spec, model, ctx.threshold('tolerance'));
    if (recovery.shapingTerms.length === 0 || !recovery.conflict) return;
    const conflict = recovery.conflict;
    const failed = conflict.second.steps[conflict.second.steps.length - 1];
    ctx.report({
      message: messageFor(model, recovery.shapingTerms, conflict, recovery.inconsistentOutcomes),
      span: outcomeSpan(ctx.spec, model, failed.choice, failed.outcome),
      trace: traceOf(ctx.spec, model, conflict),
      related: relatedOf(ctx.spec, model, conflict),
    });
  },
};

function messageFor(model: CompiledModel, terms: string[], conflict: PotentialConflict, inconsistent: number): string {
  const names = terms.map((t) => `'${t}'`).join(', ');
  const form = model.discount === 1 ? "Phi(s') - Phi(s)" : `${formatNumber(model.discount)}*Phi(s') - Phi(s)`;
  const more = inconsistent > 1 ? ` (${inconsistent} outcomes disagree with the potential the others imply)` : '';
  if (conflict.net !== undefined) {
    // The cycle in walking order: the first derivation, then the second one walked back.
    const cycle = [
      ...conflict.first.steps,
      ...[...conflict.second.steps].reverse().map((s) => ({ ...s, forward: !s.forward })),
    ];
    const directed = cycle.every((s) => s.forward) || cycle.every((s) => !s.forward);
    const lap = directed
      ? `so a policy gains ${formatAmount(Math.abs(conflict.net))} per lap going ${conflict.net * (cycle[0].forward ? 1 : -1) > 0 ? 'this way round' : 'the other way round'}`
      : 'counting steps taken backwards negatively';
    return (
      `shaping ${names} is not of the form ${form}: around the cycle ${cycle.map((s) => walkText(model, s)).join(', ')} ` +
      `it nets ${formatSigned(conflict.net)}, where a potential-based term nets 0 (${lap})${more}`
    );
  }
  const state = stateName(model, conflict.state);
  const anchor =
    conflict.anchor.kind === 'terminal'
      ? 'with Phi = 0 on terminals'
      : conflict.anchor.kind === 'loop'
        ? `with Phi(${stateName(model, conflict.anchor.state)}) = ${formatAmount(conflict.anchor.value)} fixed by the loop ` +
          conflict.anchor.steps.map((s) => stepText(model, s)).join(', ')
        : '';
  const gap = Math.abs(conflict.first.value - conflict.second.value);
  return (
    `shaping ${names} is not of the form ${form} ${anchor}: ` +
    `${derivationText(model, conflict.first.steps)} gives Phi(${state}) = ${formatAmount(conflict.first.value)}, but ` +
    `${derivationText(model, conflict.second.steps)} gives Phi(${state}) = ${formatAmount(conflict.second.value)}; ` +
    `the shaping pays ${formatAmount(gap)} more along one of these routes than a potential allows, which can change the optimal policy${more}`
  ).replace('  ', ' ');
}

/** A step of a cycle walk; one walked against its transition is marked. */
function walkText(model: CompiledModel, step: ShapingStep): string {
  return `${stepText(model, step)}${step.forward ? '' : ' taken backwards'}`;
}

function stepText(model: CompiledModel, step: ShapingStep): string {
  return `${describeStep(model, step.choice, step.outcome)} (${formatSigned(step.amount)})`;
}

/** Derivations run from the anchor to the state; read from the state outwards they follow the transitions. */
function derivationText(model: CompiledModel, steps: readonly ShapingStep[]): string {
  if (steps.length === 0) return 'the anchor';
  const shown = [...steps]
    .reverse()
    .slice(0, 8)
    .map((s) => stepText(model, s));
  if (steps.length > 8) shown.push(`and ${steps.length - 8} more`);
  return shown.join(', ');
}

/** Every outcome of both derivations once. */
function allSteps(conflict: PotentialConflict): ShapingStep[] {
  const seen = new Set<number>();
  return [...[...conflict.first.steps].reverse(), ...conflict.second.steps].filter(
    (s) => !seen.has(s.outcome) && seen.add(s.outcome),
  );
}

/**
 * A state/action sequence that a reader can follow: every listed action leads to the state listed next.
 * The steps are those of the message (with discount 1 the cycle in walking order, otherwise the second
 * derivation read outwards from the state), each shown as the transition it is. A step the route takes
 * against its transition cannot be walked, so the trace breaks there: it lists the state reached, then
 * the transition on its own. Of the route and its reverse, the one with fewer breaks is shown.
 */
function traceOf(spec: ParsedSpec, model: CompiledModel, conflict: PotentialConflict): TraceStep[] {
  const route =
    conflict.net !== undefined
      ? [...conflict.first.steps, ...[...conflict.second.steps].reverse()]
      : [...conflict.second.steps].reverse();
  const reversed = [...route].reverse();
  const steps = breaksOf(reversed) < breaksOf(route) ? reversed : route;
  const trace: TraceStep[] = [];
  const standAt = (state: number) => trace.push({ state: stateName(model, state), span: model.stateSpan[state] });
  let at: number | undefined;
  for (const step of steps) {
    if (at !== undefined && at !== step.from) standAt(at);
    trace.push({
      state: stateName(model, step.from),
      action: actionOf(model, step.choice),
      span: outcomeSpan(spec, model, step.choice, step.outcome),
    });
    at = step.to;
  }
  if (at !== undefined) standAt(at);
  return trace;
}

/** How often a transition in the list does not leave from the state the previous one entered. */
function breaksOf(steps: readonly ShapingStep[]): number {
  let breaks = 0;
  for (let i = 1; i < steps.length; i++) if (steps[i].from !== steps[i - 1].to) breaks++;
  return breaks;
}

function relatedOf(spec: ParsedSpec, model: CompiledModel, conflict: PotentialConflict): RelatedLocation[] {
  return allSteps(conflict)
    .slice(0, 20)
    .map((step) => ({
      span: outcomeSpan(spec, model, step.choice, step.outcome),
      message: `${describeStep(model, step.choice, step.outcome)}: shaping ${formatSigned(step.amount)}`,
    }));
}
