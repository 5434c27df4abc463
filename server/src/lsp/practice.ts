/**
 * A worker's first edits run slowly while V8 compiles the pipeline's hot code: the 1k-state
 * warehouse spec's first four edits took about 130, 130, 85 and 75 ms in the worker against 20 ms
 * from the sixth on. So once per worker, after it has analysed a small JSON document, it analyses
 * a few edits of that same document on its own while nothing else is asked of it, and discards
 * the results: the user's first edit then runs compiled code. A job posted meanwhile stops the
 * practice at the pipeline's next phase.
 */
import type { ParsedSpec } from '../load/types';

/**
 * The practice starts only after this much time without a job: an edit sent as soon as the
 * diagnostics arrive would otherwise wait for a practice phase (up to 120 ms more for the first
 * edit of the 1k-state spec).
 */
export const PRACTICE_DELAY_MS = 150;

/** Practice analyses per worker: by then the edit path has been compiled (see above). */
export const PRACTICE_ROUNDS = 6;

/**
 * Only a document whose first analysis took less than this is practised on: on a larger one the
 * practice costs more than the compiling it saves. A first analysis includes that compiling (the
 * 1k-state spec's took 450 to 600 ms in the worker, its later ones 20 ms).
 */
export const PRACTICE_LIMIT_MS = 1500;

/**
 * The text with the first reward number written in the spec changed (by adding 1), so that it is
 * read as an edit inside one value; undefined when the spec writes no reward.
 */
export function practiceEdit(text: string, spec: ParsedSpec): string | undefined {
  for (const transition of spec.transitions) {
    for (const outcome of transition.outcomes) {
      for (const part of outcome.reward) {
        const { start, end } = part.span;
        // The span must hold the number itself (not a computed or defaulted reward).
        if (Number(text.slice(start, end)) !== part.value) continue;
        return text.slice(0, start) + String(part.value + 1) + text.slice(end);
      }
    }
  }
  return undefined;
}

/**
 * Runs `analyse` on the edited and the original text in turn, `rounds` times at most, after a
 * pause of `delayMs`, yielding to the event loop between rounds and stopping as soon as
 * `shouldStop` says so. Resolves with the
 * rounds run. `analyse` keeps its own read memory and warm start across the rounds, as a document's
 * edits would.
 */
export async function practise(
  texts: { original: string; edited: string },
  analyse: (text: string) => Promise<void>,
  shouldStop: () => boolean,
  rounds = PRACTICE_ROUNDS,
  delayMs = PRACTICE_DELAY_MS,
): Promise<number> {
  await new Promise((resolve) => setTimeout(resolve, delayMs));
  let done = 0;
  while (done < rounds && !shouldStop()) {
    await analyse(done % 2 === 0 ? texts.edited : texts.original);
    done++;
    await new Promise((resolve) => setImmediate(resolve));
  }
  return done;
}
