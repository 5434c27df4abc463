import type { LocatedProblem } from '../load/typescript-evidence';
import type { Rule } from './types';

/** How a model call is named in messages: `outcomes({"stock":3}, "order")`, or the episode and step of a rollout. */
export function describeCall(problem: Pick<LocatedProblem, 'phase' | 'state' | 'action' | 'episode' | 'step'>): string {
  if (problem.phase === 'load') return 'loading the spec';
  // Failures only the sandbox host saw (a kill, an abort) name the job, not a call.
  if (problem.phase === 'enumeration') return 'the model code, while enumerating its states,';
  if (problem.phase === 'rollouts') return 'the model code, during the rollouts,';
  const args = [problem.state, problem.action === undefined ? undefined : JSON.stringify(problem.action)].filter(
    (a) => a !== undefined,
  );
  const call = problem.phase === 'start' ? 'start(rng)' : `${problem.phase}(${args.join(', ')})`;
  const when = problem.episode !== undefined ? ` in rollout episode ${problem.episode}, step ${problem.step ?? 0}` : '';
  return `${call}${when}`;
}

const WHAT: Record<string, string> = {
  threw: 'threw',
  malformed: 'returned a malformed value:',
  exit: 'tried to end the process:',
  'dead-end': 'returned no action for a state that is not terminal (a dead end):',
  timeout: '',
  memory: '',
  crashed: '',
  bundle: 'failed to bundle:',
};

export const modelError: Rule = {
  id: 'model-error',
  defaultSeverity: 'error',
  summary: 'TypeScript model code threw, returned a malformed value, or timed out.',
  needs: 'spec',
  sources: ['enumerable', 'sampled'],
  thresholds: {
    callTimeoutMs: {
      default: 2000,
      description:
        'Wall-clock time one model call may take before it is stopped as a hang. Model functions answer one state at a time; ' +
        'two seconds is far beyond any sane single call and short enough that an endless loop is reported while you wait.',
    },
    jobTimeoutMs: {
      default: 120000,
      description:
        'Wall-clock time one whole job (the enumeration, or a batch of rollouts) may take. Two minutes covers the default state ' +
        'cap at well under a millisecond per call; a model that needs more is too slow to check on every edit.',
    },
    memoryMb: {
      default: 512,
      description:
        'Heap limit of the process that runs the model, in MB (the whole process may use about twice that plus 256 MB). Enough for the states of the default state cap (200,000) ' +
        'with room to spare; raise it together with `stateCap` for larger models.',
    },
  },
  documentation: `
**What it finds.** The code of a TypeScript spec failed while Episcope ran it: it threw an error, returned
something that is not what the spec API asks for (an outcome without a numeric probability, probabilities
that do not add up to 1, a state that is not plain JSON, a Promise), ran into an endless loop, used up its
memory, or called \`process.exit\`. The message names the call (\`outcomes({"stock":3}, "order")\`, or the
rollout episode and step), what went wrong, and the line: for a thrown error the line of the \`throw\`, for an
endless loop the line it was stopped at; a line in another file is given as \`file:line:column\`.

**Why it matters.** No value can be computed for a model whose code fails, and a failure in a rarely
visited state would otherwise surface only hours into training.

**How it runs.** Model code runs in a child process of its own (Node's permission model, no network
modules, an empty environment, a heap and an OS memory limit) with wall-clock limits the host enforces;
the editor and the command line are never at risk. It runs only in trusted workspaces, and never with
\`--no-exec\`. States handed to \`outcomes\` are frozen, so a function that changes its input instead of
returning a new state fails here with the line of the assignment.

**Fix.** Follow the message to the line. An \`actions\` that returns nothing for a state that is not terminal
is a dead end: return at least one action, or make \`terminal(state)\` name the state's kind.

**Thresholds.** \`callTimeoutMs\` (default 2000), \`jobTimeoutMs\` (default 120000) and \`memoryMb\`
(default 512), set as \`"model-error.callTimeoutMs"\` and so on in the config's \`thresholds\`.
`.trim(),
  check(ctx) {
    for (const problem of ctx.spec.typescript?.modelErrors ?? []) {
      const what = WHAT[problem.kind] ?? '';
      const where = problem.elsewhere ? ` (at ${problem.elsewhere})` : '';
      ctx.report({
        message: `${describeCall(problem)} ${what ? `${what} ` : ''}${problem.message}${where}; no values can be computed until it is fixed`,
        span: problem.span,
      });
    }
  },
};
