/**
 * The editor settings under `episcope.*`, and how they combine with `episcope.config.json`: the
 * config file is the project's shared truth (the command line reads it too); a setting that is set
 * overrides it for this editor only. Settings left unset (null, empty) leave the config file's values.
 */
import type { ResolvedConfig } from '../config';
import type { Severity } from '../rules/types';

export interface EpiscopeSettings {
  enable: boolean;
  /** Severity per rule id, or "off". */
  rules: Record<string, Severity | 'off'>;
  /** Thresholds keyed `rule-id.name`. */
  thresholds: Record<string, number>;
  rollouts: number | null;
  seed: number | null;
  stateCap: number | null;
  precision: number | null;
  /** Whether TypeScript model code may run (only ever in trusted workspaces). */
  executeModelCode: boolean;
}

export const DEFAULT_SETTINGS: EpiscopeSettings = {
  enable: true,
  rules: {},
  thresholds: {},
  rollouts: null,
  seed: null,
  stateCap: null,
  precision: null,
  executeModelCode: true,
};

const SEVERITIES = new Set(['error', 'warning', 'info', 'off']);

/** Reads whatever the client sent, keeping only well-typed values (a bad setting falls back to its default). */
export function readSettings(raw: unknown): EpiscopeSettings {
  const source = isObject(raw) ? raw : {};
  const settings: EpiscopeSettings = { ...DEFAULT_SETTINGS, rules: {}, thresholds: {} };
  if (typeof source.enable === 'boolean') settings.enable = source.enable;
  if (typeof source.executeModelCode === 'boolean') settings.executeModelCode = source.executeModelCode;
  if (isObject(source.rules)) {
    for (const [rule, severity] of Object.entries(source.rules)) {
      if (typeof severity === 'string' && SEVERITIES.has(severity)) settings.rules[rule] = severity as Severity | 'off';
    }
  }
  if (isObject(source.thresholds)) {
    for (const [key, value] of Object.entries(source.thresholds)) {
      if (typeof value === 'number' && Number.isFinite(value)) settings.thresholds[key] = value;
    }
  }
  settings.rollouts = wholeNumber(source.rollouts, 0);
  settings.seed = wholeNumber(source.seed, Number.MIN_SAFE_INTEGER);
  settings.stateCap = wholeNumber(source.stateCap, 1);
  settings.precision =
    typeof source.precision === 'number' && source.precision > 0 && source.precision < 1 ? source.precision : null;
  return settings;
}

/** The config the pipeline gets: the config file's, with the settings that are set on top. */
export function mergeSettings(config: ResolvedConfig, settings: EpiscopeSettings): ResolvedConfig {
  return {
    ...config,
    rules: { ...config.rules, ...settings.rules },
    thresholds: { ...config.thresholds, ...settings.thresholds },
    ignore: [...config.ignore],
    rollouts: settings.rollouts ?? config.rollouts,
    seed: settings.seed ?? config.seed,
    stateCap: settings.stateCap ?? config.stateCap,
    precision: settings.precision ?? config.precision,
  };
}

function wholeNumber(value: unknown, minimum: number): number | null {
  return typeof value === 'number' && Number.isInteger(value) && value >= minimum ? value : null;
}

function isObject(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}
