/** Messages between the sandbox host and the child process that runs model code (worker.ts). */
import type { LearningSummary } from '../analysis/rollout-stats';
import type { TransitionCounts } from '../model/empirical';
import type { LearnJobOptions, LearnRun, MeasuredPart, MeasureJobOptions, TrainedPart } from './learn';
import type { TrajectoryLog } from './transition-record';
import type { KeyListing } from './enumeration-columns';
import type { EnumerationHead, EnumerationOptions, RolloutOptions, RolloutRun, RuntimeProblem } from './runtime';

/** The file name model code carries in stack traces inside the sandbox. */
export const MODEL_SCRIPT_NAME = 'episcope-model.js';

/** The global function the sandbox defines and every instrumented loop body calls first (bundle.ts). */
export const LOOP_CHECK = '__episcopeLoopCheck';

/** The child's file descriptor for liveness beats (one byte each); requests and replies use the IPC channel. */
export const BEAT_FD = 4;

/**
 * Written by the child to its stdout and stderr just before each reply. The reply and the output
 * travel on different pipes, so the host holds a reply until both streams have passed this mark:
 * what the model printed during a job is then always shown with that job's result.
 */
export const OUTPUT_MARK = '\u0000episcope:end-of-job\u0000';

/**
 * The child's file descriptor of the host's column file: an unlinked temporary file the child
 * writes an enumeration's outcome columns into (enumeration-columns.ts), because the IPC channel
 * moves large data in socket-buffer-sized handoffs between the two processes, slow on a busy machine.
 */
export const COLUMN_FD = 5;

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
  members: Record<
    'start' | 'startDistribution' | 'actions' | 'outcomes' | 'terminal' | 'sample' | 'stateKey',
    'function' | 'value' | 'absent'
  >;
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
  | { type: 'learn'; options: LearnJobOptions }
  /** --jobs N: the held recorder of a `rollouts` job with `holdRecording` replays the later ranges' logs in order, then explores. */
  | { type: 'record'; logs: TrajectoryLog[]; seed: number; declaredTerms: string[] }
  /** --jobs N: learning in phases (learn.ts); `decide` uses the learner this child trained last. */
  | { type: 'train'; options: LearnJobOptions }
  | { type: 'measure'; options: MeasureJobOptions }
  | { type: 'decide'; measuredEpisodes: number };

export type WorkerReply =
  | { type: 'loaded'; description: ModelDescription; randomness: RandomnessCall[] }
  | { type: 'problem'; problem: import('./runtime').RuntimeProblem; randomness: RandomnessCall[] }
  /** The enumeration without its outcome columns and state keys (`head.stateKeys` is empty), which the child wrote to COLUMN_FD first (enumeration-columns.ts). */
  | { type: 'enumerated'; head: EnumerationHead; keys: KeyListing; randomness: RandomnessCall[] }
  | { type: 'rolled'; run: RolloutRun; randomness: RandomnessCall[] }
  | { type: 'learned'; run: LearnRun; randomness: RandomnessCall[] }
  | { type: 'recorded'; counts?: TransitionCounts; countsProblem?: RuntimeProblem; randomness: RandomnessCall[] }
  | { type: 'trained'; trained?: TrainedPart; problem?: RuntimeProblem; randomness: RandomnessCall[] }
  | { type: 'measured'; part?: MeasuredPart; problem?: RuntimeProblem; randomness: RandomnessCall[] }
  | {
      type: 'decided';
      decision: Pick<LearningSummary, 'decision' | 'noDecision'>;
      problem?: RuntimeProblem;
      randomness: RandomnessCall[];
    }
  /** An error outside any model call (an unhandled rejection, an uncaught throw in a timer); the child ends after it. */
  | { type: 'fault'; message: string; stack?: string };
