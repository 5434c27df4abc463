/** Messages between the sandbox host and its worker. */
import type { LearnJobOptions, LearnRun } from './learn';
import type { Enumeration, EnumerationOptions, RolloutOptions, RolloutRun } from './runtime';

/** The file name model code carries in stack traces inside the worker. */
export const MODEL_SCRIPT_NAME = 'episcope-model.js';

/** Length of the shared buffer holding the key of the state being expanded (UTF-16 code units). */
export const STATE_TEXT_LENGTH = 512;

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
  members: Record<'start' | 'startDistribution' | 'actions' | 'outcomes' | 'terminal' | 'sample', 'function' | 'value' | 'absent'>;
}

export type HostRequest =
  | { type: 'load'; code: string; specPath: string }
  | { type: 'enumerate'; options: Omit<EnumerationOptions, 'progress' | 'onExpand'> }
  | { type: 'rollouts'; options: Omit<RolloutOptions, 'progress'> }
  | { type: 'learn'; options: LearnJobOptions };

export type WorkerReply =
  | { type: 'loaded'; description: ModelDescription; randomness: RandomnessCall[] }
  | { type: 'problem'; problem: import('./runtime').RuntimeProblem; randomness: RandomnessCall[] }
  | { type: 'enumerated'; result: Enumeration; randomness: RandomnessCall[] }
  | { type: 'rolled'; run: RolloutRun; randomness: RandomnessCall[] }
  | { type: 'learned'; run: LearnRun; randomness: RandomnessCall[] };
