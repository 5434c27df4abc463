/** Messages between the sandbox host and the child process that runs model code (worker.ts). */
import type { LearnJobOptions, LearnRun } from './learn';
import type { OutcomePart } from './enumeration-parts';
import type { EnumerationHead, EnumerationOptions, RolloutOptions, RolloutRun } from './runtime';

/** The file name model code carries in stack traces inside the sandbox. */
export const MODEL_SCRIPT_NAME = 'episcope-model.js';

/** The global function the sandbox defines and every instrumented loop body calls first (bundle.ts). */
export const LOOP_CHECK = '__episcopeLoopCheck';

/** The child's file descriptor for liveness beats (one byte each); requests and replies use the IPC channel. */
export const BEAT_FD = 4;

/** A call of an unseeded random source or clock made by model code. */
export interface RandomnessCall {
  api: string;
  count: number;
  /** The first call's stack (generated positions). */
  stack: string;
}

/** The default export's fields as the running code sees them (plain JSON), and which members exist. */
export interface ModelDescription {
  name?: unknown;
  objective?: unknown;
  discount?: unknown;
  horizon?: unknown;
  rewardTerms?: unknown;
  members: Record<'start' | 'startDistribution' | 'actions' | 'outcomes' | 'terminal' | 'sample' | 'stateKey', 'function' | 'value' | 'absent'>;
}

/**
 * The limits the child checks itself, so that an honest model is stopped with its call and line.
 * The host enforces the same limits with a margin and a kill, whatever the child does.
 */
export interface ChildLimits {
  callTimeoutMs: number;
  jobTimeoutMs: number;
  memoryMb: number;
}

export type HostRequest =
  | { type: 'load'; code: string; specPath: string; limits: ChildLimits }
  | { type: 'enumerate'; options: Omit<EnumerationOptions, 'progress' | 'onExpand'> }
  | { type: 'rollouts'; options: Omit<RolloutOptions, 'progress'> }
  | { type: 'learn'; options: LearnJobOptions };

export type WorkerReply =
  | { type: 'loaded'; description: ModelDescription; randomness: RandomnessCall[] }
  | { type: 'problem'; problem: import('./runtime').RuntimeProblem; randomness: RandomnessCall[] }
  /** The enumeration without its outcome columns; `partCount(head.outcomesListed)` OutcomePart messages follow, in order. */
  | { type: 'enumerated'; head: EnumerationHead; randomness: RandomnessCall[] }
  | OutcomePart
  | { type: 'rolled'; run: RolloutRun; randomness: RandomnessCall[] }
  | { type: 'learned'; run: LearnRun; randomness: RandomnessCall[] }
  /** An error outside any model call (an unhandled rejection, an uncaught throw in a timer); the child ends after it. */
  | { type: 'fault'; message: string; stack?: string };
