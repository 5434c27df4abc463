/**
 * The host's side of an enumeration reply that arrives in parts: the head (state keys, choices,
 * start, problems) says how many outcomes follow, the columns are allocated once at their final
 * size, and each part's chunk is copied into place and dropped. So the host never holds a second
 * whole copy of the outcome columns, nor the serialised bytes of a whole reply. Every part is
 * model-controlled input: anything out of order or of the wrong shape ends the assembly.
 */
import { OUTCOME_CHUNK, type Enumeration, type EnumerationHead } from './runtime';

/** Outcome and choice indices are Int32, so no honest enumeration lists more outcomes. */
const MOST_OUTCOMES = 0x7fffffff;

/** One part of the outcome columns, as the child sends it. */
export interface OutcomePart {
  type: 'outcomes';
  part: number;
  target: Int32Array;
  prob: Float64Array;
  reward: Float64Array;
  terms: Float64Array[];
}

/** How many parts the child sends for this many outcomes: one per full chunk, and one for the rest. */
export function partCount(outcomes: number): number {
  return Math.ceil(outcomes / OUTCOME_CHUNK);
}

export class EnumerationAssembly {
  private readonly target: Int32Array;
  private readonly prob: Float64Array;
  private readonly reward: Float64Array;
  private readonly terms: Float64Array[];
  private filled = 0;
  private next = 0;
  private readonly parts: number;

  /** Throws a RangeError when the head is not a head, or its columns cannot be allocated. */
  constructor(private readonly head: EnumerationHead) {
    const outcomes = (head as { outcomesListed?: unknown } | null)?.outcomesListed;
    if (typeof outcomes !== 'number' || !Number.isInteger(outcomes) || outcomes < 0 || outcomes > MOST_OUTCOMES) {
      throw new RangeError('the outcome count is not a whole number in range');
    }
    if (!Array.isArray(head.termNames) || !head.termNames.every((name) => typeof name === 'string')) throw new RangeError('the term names are not strings');
    this.parts = partCount(outcomes);
    this.target = new Int32Array(outcomes);
    this.prob = new Float64Array(outcomes);
    this.reward = new Float64Array(outcomes);
    this.terms = head.termNames.map(() => new Float64Array(outcomes));
  }

  get done(): boolean {
    return this.next === this.parts;
  }

  /** Copies one part into place; false when it is not the part expected next, in full. */
  add(message: unknown): boolean {
    const part = message as OutcomePart;
    if (this.done || typeof part !== 'object' || part === null || part.type !== 'outcomes' || part.part !== this.next) return false;
    const { target, prob, reward, terms } = part;
    if (!(target instanceof Int32Array) || !(prob instanceof Float64Array) || !(reward instanceof Float64Array)) return false;
    const length = Math.min(OUTCOME_CHUNK, this.target.length - this.filled);
    if (target.length !== length || prob.length !== length || reward.length !== length) return false;
    if (!Array.isArray(terms) || terms.length !== this.terms.length || !terms.every((t) => t instanceof Float64Array && t.length === length)) return false;
    this.target.set(target, this.filled);
    this.prob.set(prob, this.filled);
    this.reward.set(reward, this.filled);
    for (let t = 0; t < terms.length; t++) this.terms[t].set(terms[t], this.filled);
    this.filled += length;
    this.next++;
    return true;
  }

  /** The whole enumeration, once every part is in. */
  result(): Enumeration {
    if (!this.done) throw new Error('the enumeration is not complete yet');
    return { ...this.head, outcomeTarget: this.target, outcomeProb: this.prob, outcomeReward: this.reward, termRewards: this.terms };
  }
}
