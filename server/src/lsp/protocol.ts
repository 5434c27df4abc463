/**
 * Messages between the language server's main thread and its analysis workers, plus the names
 * of the server's custom notifications and commands. Everything here crosses a thread boundary by
 * structured clone, so it holds plain data and typed arrays only.
 */
import type { Diagnostic } from 'vscode-languageserver-protocol';
import type { WarmStart } from '../analysis/warm-start';
import type { EpiscopeSettings } from './settings';

/** One analysis request for one version of one document. */
export interface AnalysisJob {
  kind: 'analyze';
  jobId: number;
  uri: string;
  version: number;
  /** File system path when the document is a file, else the URI (used for config ignores and messages). */
  path: string;
  text: string;
  /** Editor settings; the worker merges them over the config file that applies to `path`. */
  settings: EpiscopeSettings;
  /** Texts of config files open in the editor (by path), which win over the files on disk. */
  openConfigTexts: Record<string, string>;
  exec: boolean;
  /** Folder holding `<rule-id>.md` files, or undefined when the documentation is not installed. */
  docsFolder?: string;
  /** The last solution of an earlier version of the document: the solvers start from it (a guess; every bound is still verified). */
  startFrom?: WarmStart;
}

export type WorkerRequest = AnalysisJob;

/** How many documents' last reads an analysis worker keeps (JsonReadMemory), so the pool knows where a re-read is cheap. */
export const REMEMBERED_DOCUMENTS = 4;

export type WorkerReply =
  | { kind: 'ready' }
  | { kind: 'done'; jobId: number; snapshot: AnalysisSnapshot }
  | { kind: 'failed'; jobId: number; error: string };

/** A quick fix, in offsets of the analysed version (mapped to later versions when applied). */
export interface OffsetFix {
  title: string;
  edits: Array<{ start: number; end: number; newText: string }>;
}

/** Carried in `Diagnostic.data` so that code actions need no server-side lookup. */
export interface DiagnosticData {
  rule: string;
  /** The document version the diagnostic and the fix offsets refer to. */
  version: number;
  fixes: OffsetFix[];
}

/** Kinds of the hover tokens (see HoverIndex). */
export const TOKEN_STATE = 1;

/**
 * Where hovers can land, in offsets of the analysed text. Tokens are sorted by start and do not
 * overlap; each names a state index of the model. Transitions are sorted by start, do not overlap,
 * and list the model choices they define (CSR: choicesOf(t) = choices[choiceStart[t] .. choiceStart[t+1]-1]).
 */
export interface HoverIndex {
  tokenStart: Int32Array;
  tokenEnd: Int32Array;
  tokenKind: Uint8Array;
  tokenTarget: Int32Array;
  transitionStart: Int32Array;
  transitionEnd: Int32Array;
  transitionChoiceStart: Int32Array;
  transitionChoices: Int32Array;
}

/** Per-state and per-choice figures that hovers read; typed arrays, transferred without copying. */
export interface ValueTables {
  stateCount: number;
  discount: number;
  horizon?: number;
  maximize: boolean;
  precision: number;
  exact: boolean;
  actionNames: string[];
  /** Every state's readable name, concatenated: name(s) = stateNames.slice(stateNameStart[s], stateNameStart[s+1]). One string clones far faster than an array of many. */
  stateNames: string;
  stateNameStart: Int32Array;
  terminal: Uint8Array;
  reachable: Uint8Array;
  choiceStart: Int32Array;
  choiceAction: Int32Array;
  optimalLower: Float64Array;
  optimalUpper: Float64Array;
  worstLower: Float64Array;
  worstUpper: Float64Array;
  randomLower: Float64Array;
  randomUpper: Float64Array;
  qLower: Float64Array;
  qUpper: Float64Array;
  isBest: Uint8Array;
  maxGoalReach: Float64Array;
  /** Reach probabilities per terminal kind, optimal and random policy. */
  optimalReach: { goal: Float64Array; failure: Float64Array; neutral: Float64Array; none: Float64Array };
  randomReach: { goal: Float64Array; failure: Float64Array; neutral: Float64Array; none: Float64Array };
  optimalLength: Float64Array;
  randomLength: Float64Array;
}

/**
 * What learning from samples found at the states a sampled model's source names as literals:
 * estimates, never bounds. Literal ranges are sorted and disjoint, each naming a key; a key has
 * one row (one per time step with a horizon) and each row its actions (CSR throughout).
 */
export interface LearnedTables {
  method: string;
  spentSteps: number;
  spentEpisodes: number;
  tokenStart: Int32Array;
  tokenEnd: Int32Array;
  tokenKey: Int32Array;
  /** Key k's text: keyNames.slice(keyNameStart[k], keyNameStart[k+1]). */
  keyNames: string;
  keyNameStart: Int32Array;
  keyRowStart: Int32Array;
  /** Per row: steps taken before the state (-1 without a horizon), the visits of the state, its first action. */
  rowStep: Int32Array;
  rowVisits: Int32Array;
  rowActionStart: Int32Array;
  /** Per action of a row: an index into actionNames, the learned Q (NaN when never tried) and its visits. */
  actionName: Int32Array;
  q: Float64Array;
  actionVisits: Int32Array;
  actionNames: string[];
}

/** A markdown hover attached to a fixed range of the analysed text. */
export interface FixedHover {
  start: number;
  end: number;
  markdown: string;
}

/** Everything the main thread keeps of one analysis: enough for diagnostics, hovers, lenses and actions. */
export interface AnalysisSnapshot {
  uri: string;
  version: number;
  diagnostics: Diagnostic[];
  /** Offset of the spec's root value, where the summary lens goes. */
  rootOffset: number;
  /** One-line summaries of the start's returns and goal reach (empty when there is no analysis). */
  lens: string[];
  /** One-line status for the editor's status item. */
  status: string;
  /** Why there is no analysis, when there is none. */
  notAnalysed?: string;
  /** What TypeScript model code printed in the sandbox; the server writes it to its log (the output channel). */
  modelOutput?: string;
  hoverIndex?: HoverIndex;
  values?: ValueTables;
  /** Learned Q at the states a sampled model's source names (hovers on those literals). */
  learned?: LearnedTables;
  /** Hovers on `discount` and `horizon`. */
  fixedHovers: FixedHover[];
  /** The config file that applied, with its own problems as diagnostics on it. */
  configFile?: { path: string; uri: string; text: string; diagnostics: Diagnostic[] };
  /** Rules that failed unexpectedly (our bugs): logged, never shown as findings. */
  internalErrors: string[];
  stateCount?: number;
  durationMs: number;
  cancelled: boolean;
  /** The analysis' solution, which the scheduler keeps and hands to the document's next analysis (then drops from the snapshot). */
  solution?: WarmStart;
}

/** Notification the server sends so an editor can show what the analysis is doing. */
export const STATUS_NOTIFICATION = 'episcope/status';
export interface StatusParams {
  uri: string;
  state: 'analysing' | 'done' | 'failed' | 'off';
  text: string;
}

/** Notification an editor sends when the workspace's trust changes (model code runs only when trusted). */
export const TRUST_NOTIFICATION = 'episcope/trust';
export interface TrustParams {
  trusted: boolean;
}

/** Commands the server executes (workspace/executeCommand). */
export const COMMAND_SHOW_RULE_DOC = 'episcope.server.showRuleDocumentation';
export const COMMAND_ANALYZE_WORKSPACE = 'episcope.server.analyzeWorkspace';
export const COMMAND_REVEAL = 'episcope.server.reveal';
export const SERVER_COMMANDS = [COMMAND_SHOW_RULE_DOC, COMMAND_ANALYZE_WORKSPACE, COMMAND_REVEAL];

export interface WorkspaceAnalysisSummary {
  files: number;
  errors: number;
  warnings: number;
  infos: number;
  failed: number;
}
