/**
 * `episcope.config.json`: finding it, reading it (JSON with comments and trailing commas) and
 * validating it against `schemas/config.schema.json` with ajv. Problems become `config` findings
 * with the exact range of the offending key or value, never an exception; the valid parts of a
 * file with problems still apply (an invalid entry is dropped, not the whole file), except after a
 * JSON syntax error, when nothing of the file applies.
 *
 * The command line and the language server both load configs through this module.
 */
import Ajv2020, { type ErrorObject, type ValidateFunction } from 'ajv/dist/2020';
import {
  findNodeAtLocation,
  getNodeValue,
  parseTree,
  printParseErrorCode,
  type Node,
  type ParseError,
} from 'jsonc-parser';
import { existsSync, readFileSync, statSync } from 'node:fs';
import * as nodePath from 'node:path';
import configSchema from '../../schemas/config.schema.json';
import { suggestRules } from './rules/suggest';
import { resolveConfig, type EpiscopeConfig, type ResolvedConfig } from './config';
import { RULES } from './rules/registry';
import type { Finding, Rule, Severity } from './rules/types';
import { LineIndex } from './load/lines';
import type { Span } from './load/types';
import type { FrontRule } from './suppress';

export const CONFIG_FILE_NAME = 'episcope.config.json';
export const CONFIG_RULE_ID = 'config';

export const CONFIG_RULE: FrontRule = {
  id: CONFIG_RULE_ID,
  defaultSeverity: 'error',
  summary: 'episcope.config.json is not valid JSON or does not match its schema.',
  documentation: [
    'A config problem silently changes what the check enforces: a misspelt rule id leaves the rule at',
    'its default severity, a misspelt ignore hides nothing (or too much). So every problem in the',
    'config file is a finding with the range of the offending key or value.',
    '',
    'Fires on: JSON syntax errors; fields the schema (`schemas/config.schema.json`) does not know;',
    'unknown rule ids; severities other than error, warning, info or off; threshold keys that are not',
    '`rule-id.name` or name a threshold the rule does not have; ignore entries without a rule, a path',
    'or a reason; numbers out of range.',
    '',
    'An invalid entry is dropped and the rest of the file applies. After a JSON syntax error nothing',
    'of the file applies.',
  ].join('\n'),
};

/** A loaded config file: the resolved settings and the problems found in it. */
export interface ConfigFile {
  path: string;
  text: string;
  lines: LineIndex;
  config: ResolvedConfig;
  /** `config` findings, with spans into `text`. */
  findings: Finding[];
  /** The span of each entry of `config.ignore`, in the same order (for unused-ignore findings). */
  ignoreSpans: Span[];
}

let configValidator: ValidateFunction<EpiscopeConfig> | undefined;

/** The config schema's validator, compiled on first use: a run without a config file never pays for it. */
function configValidatorOf(): ValidateFunction<EpiscopeConfig> {
  configValidator ??= new Ajv2020({ allErrors: true, strict: true }).compile<EpiscopeConfig>(configSchema);
  return configValidator;
}

/**
 * Parses and validates a config file's text. Pure (no file system access). `baseDir` becomes the
 * folder that ignore globs are relative to; by default the folder of `path`.
 */
export function parseConfigText(
  path: string,
  text: string,
  options: { baseDir?: string; rules?: readonly Rule[]; severity?: Severity } = {},
): ConfigFile {
  const rules = options.rules ?? RULES;
  const lines = new LineIndex(text);
  const findings: Finding[] = [];
  const severity = options.severity ?? CONFIG_RULE.defaultSeverity;
  const report = (message: string, span: Span): void => {
    if (!findings.some((f) => f.message === message && f.span.start === span.start)) {
      findings.push({ rule: CONFIG_RULE_ID, severity, message, span });
    }
  };
  const baseDir = options.baseDir ?? dirname(path);
  const empty = (): ConfigFile => ({
    path,
    text,
    lines,
    config: { ...resolveConfig(undefined), baseDir },
    findings,
    ignoreSpans: [],
  });

  const syntaxErrors: ParseError[] = [];
  const root = parseTree(text, syntaxErrors, { allowTrailingComma: true, disallowComments: false });
  for (const error of syntaxErrors) {
    const start = Math.min(error.offset, text.length);
    report(`not valid JSON: ${describeParseError(error)}; nothing of this file applies until it is fixed`, {
      start,
      end: Math.min(text.length, start + Math.max(error.length, 1)),
    });
  }
  if (syntaxErrors.length > 0 || !root) {
    if (!root && syntaxErrors.length === 0)
      report('the file is empty: write {} for the defaults', { start: 0, end: 0 });
    return empty();
  }

  const value: unknown = getNodeValue(root);
  // Pointers (as key lists) to the parts that must be dropped because they are invalid.
  const invalid: string[][] = [];
  const validateConfig = configValidatorOf();
  if (!validateConfig(value)) {
    for (const error of validateConfig.errors ?? []) {
      const located = describeSchemaError(error, rules);
      if (!located) continue;
      report(located.message, spanOf(root, located.pointer, located.key, located.openingOnly));
      invalid.push(located.key !== undefined ? [...located.pointer, located.key] : located.pointer);
    }
  }
  if (!isPlainObject(value)) return empty();

  const kept = dropInvalid(value, invalid);
  // Threshold names are declared by the rules themselves, so they are checked against the registry.
  for (const key of Object.keys(kept.thresholds ?? {})) {
    const problem = thresholdProblem(key, rules);
    if (problem) {
      report(problem, spanOf(root, ['thresholds'], key));
      delete kept.thresholds![key];
    }
  }

  const ignoreSpans: Span[] = [];
  const ignore: NonNullable<EpiscopeConfig['ignore']> = [];
  const ignoreNode = findNodeAtLocation(root, ['ignore']);
  (Array.isArray(value.ignore) ? value.ignore : []).forEach((entry: unknown, index: number) => {
    if (invalid.some((p) => p[0] === 'ignore' && (p.length === 1 || p[1] === String(index)))) return;
    const item = ignoreNode?.children?.[index];
    ignore.push(entry as { rule: string; path: string; reason: string });
    ignoreSpans.push(item ? { start: item.offset, end: item.offset + item.length } : { start: 0, end: 0 });
  });
  kept.ignore = ignore;
  return { path, text, lines, config: { ...resolveConfig(kept), baseDir }, findings, ignoreSpans };
}

/** Reads and validates a config file; an unreadable file gives a `config` finding, not an exception. */
export function loadConfigFile(path: string): ConfigFile {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (error) {
    const file = parseConfigText(path, '{}');
    const reason = error instanceof Error ? error.message : String(error);
    file.findings.push({
      rule: CONFIG_RULE_ID,
      severity: 'error',
      message: `cannot read the config file: ${reason}`,
      span: { start: 0, end: 0 },
    });
    return file;
  }
  return parseConfigText(path, text);
}

/**
 * The config file that applies to specs in `startDir`: the nearest `episcope.config.json` in it or
 * a folder above it, looking no higher than the root of the git repository (a folder holding `.git`).
 */
export function findConfigFile(startDir: string): string | undefined {
  let dir = nodePath.resolve(startDir);
  for (;;) {
    const candidate = nodePath.join(dir, CONFIG_FILE_NAME);
    if (isFile(candidate)) return candidate;
    if (existsSync(nodePath.join(dir, '.git'))) return undefined;
    const parent = nodePath.dirname(dir);
    if (parent === dir) return undefined;
    dir = parent;
  }
}

/** Whether a path names a readable regular file (false for anything that cannot be stat'ed). */
export function isFile(path: string): boolean {
  try {
    return statSync(path).isFile();
  } catch {
    return false;
  }
}

// ---------------------------------------------------------------------------------------------

function dirname(path: string): string {
  const slashed = path.replace(/\\/g, '/');
  const cut = slashed.lastIndexOf('/');
  return cut < 0 ? '.' : cut === 0 ? '/' : slashed.slice(0, cut);
}

function isPlainObject(value: unknown): value is Record<string, unknown> & EpiscopeConfig {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}

/** A copy of the config without the invalid parts (whole scalar fields, single map or list entries). */
function dropInvalid(value: Record<string, unknown>, invalid: string[][]): EpiscopeConfig {
  const out: Record<string, unknown> = {};
  for (const [field, fieldValue] of Object.entries(value)) {
    const hits = invalid.filter((p) => p[0] === field);
    if (hits.some((p) => p.length === 1)) continue;
    if ((field === 'rules' || field === 'thresholds') && isPlainObject(fieldValue)) {
      const entries = Object.entries(fieldValue).filter(([key]) => !hits.some((p) => p[1] === key));
      out[field] = Object.fromEntries(entries);
    } else if (field !== 'ignore') {
      out[field] = fieldValue;
    }
  }
  return out as EpiscopeConfig;
}

function thresholdProblem(key: string, rules: readonly Rule[]): string | undefined {
  const dot = key.indexOf('.');
  const ruleId = key.slice(0, dot);
  const name = key.slice(dot + 1);
  const rule = rules.find((r) => r.id === ruleId);
  if (!rule) return `threshold "${key}": no rule named "${ruleId}"${didYouMean(ruleId, rules)}`;
  const names = Object.keys(rule.thresholds ?? {});
  if (!names.includes(name)) {
    const known = names.length > 0 ? `its thresholds: ${names.map((n) => `${ruleId}.${n}`).join(', ')}` : 'it has none';
    return `threshold "${key}": rule ${ruleId} has no threshold "${name}" (${known})`;
  }
  return undefined;
}

function didYouMean(id: string, rules: readonly Rule[]): string {
  const close = suggestRules(id, rules);
  return close.length > 0 ? ` (did you mean ${close.map((c) => `"${c}"`).join(' or ')}?)` : '';
}

interface LocatedError {
  message: string;
  /** The instance location, as keys. */
  pointer: string[];
  /** For errors about a property name: the name (the span is then the key's). */
  key?: string;
  /** Point at the object's opening brace only (a missing field of a multi-line object). */
  openingOnly?: boolean;
}

const FIELD_LIST: Record<string, string> = {
  '': 'rules, thresholds, ignore, stateCap, rollouts, seed, precision, learning, halfWidth, jobs',
  learning: 'method, episodes, steps, epsilon, firstVisit',
  ignore: 'rule, path, reason',
};

function describeSchemaError(error: ErrorObject, rules: readonly Rule[]): LocatedError | undefined {
  const pointer = error.instancePath === '' ? [] : error.instancePath.slice(1).split('/').map(unescapePointer);
  const where = readablePath(pointer);
  const params = error.params as Record<string, unknown>;
  switch (error.keyword) {
    case 'additionalProperties': {
      const key = String(params.additionalProperty);
      if (pointer.length === 1 && pointer[0] === 'rules')
        return { message: `rules: no rule named "${key}"${didYouMean(key, rules)}`, pointer, key };
      const fields = FIELD_LIST[pointer[0] === 'ignore' || pointer[0] === 'learning' ? pointer[0] : ''];
      return {
        message: `${where === '' ? '' : `${where}: `}unknown field "${key}" (the fields are ${fields})`,
        pointer,
        key,
      };
    }
    case 'propertyNames':
      // Reported through the inner keyword (with error.propertyName) below.
      return undefined;
    case 'required':
      return {
        message: `${where === '' ? 'the config' : where} needs "${String(params.missingProperty)}"`,
        pointer,
        openingOnly: true,
      };
    case 'enum':
      if (pointer[0] === 'ignore' && pointer[2] === 'rule') {
        return {
          message: `${where}: no rule named ${JSON.stringify(valueText(error.data))}${didYouMean(String(error.data), rules)}; use a rule id or "*"`,
          pointer,
        };
      }
      return {
        message: `${where} must be one of ${(params.allowedValues as unknown[]).map((v) => JSON.stringify(v)).join(', ')}`,
        pointer,
      };
    case 'type': {
      const type = String(params.type);
      const article =
        type === 'integer' ? 'a whole number' : type === 'object' || type === 'array' ? `an ${type}` : `a ${type}`;
      return { message: `${where === '' ? 'the config' : where} must be ${article}`, pointer };
    }
    case 'minimum':
    case 'maximum':
    case 'exclusiveMinimum':
    case 'exclusiveMaximum':
      return { message: `${where} must be ${String(params.comparison)} ${String(params.limit)}`, pointer };
    case 'minLength':
      return { message: `${where} must not be empty`, pointer };
    case 'pattern':
      if (error.propertyName !== undefined) {
        return {
          message: `${where}: the key "${error.propertyName}" must be "rule-id.name", e.g. "reward-loop.probabilityGap"`,
          pointer,
          key: error.propertyName,
        };
      }
      return {
        message: `${where} must ${pointer[pointer.length - 1] === 'reason' ? 'say why (not only spaces)' : `match ${String(params.pattern)}`}`,
        pointer,
      };
    default:
      return { message: `${where === '' ? 'the config' : where} ${error.message ?? 'is invalid'}`, pointer };
  }
}

function valueText(data: unknown): string {
  return typeof data === 'string' ? data : JSON.stringify(data);
}

function unescapePointer(segment: string): string {
  return segment.replace(/~1/g, '/').replace(/~0/g, '~');
}

/** `rules["reward-loop"]`, `ignore[0].reason`, `seed`. */
function readablePath(pointer: string[]): string {
  let out = '';
  pointer.forEach((segment, i) => {
    if (/^\d+$/.test(segment) && i > 0 && pointer[i - 1] === 'ignore') out += `[${segment}]`;
    else if (/^[A-Za-z_$][\w$]*$/.test(segment)) out += out === '' ? segment : `.${segment}`;
    else out += `[${JSON.stringify(segment)}]`;
  });
  return out;
}

/** The span of the value at `pointer`, or of the key `key` of the object there. */
function spanOf(root: Node, pointer: string[], key?: string, openingOnly = false): Span {
  const path = pointer.map((segment) => (/^\d+$/.test(segment) ? Number(segment) : segment));
  const node = path.length === 0 ? root : findNodeAtLocation(root, path);
  if (!node) return { start: root.offset, end: root.offset + 1 };
  if (key !== undefined && node.type === 'object') {
    const property = node.children?.find((p) => p.children?.[0]?.value === key);
    const keyNode = property?.children?.[0];
    if (keyNode) return { start: keyNode.offset, end: keyNode.offset + keyNode.length };
  }
  if (openingOnly) return { start: node.offset, end: node.offset + 1 };
  return { start: node.offset, end: node.offset + node.length };
}

function describeParseError(error: ParseError): string {
  const names: Record<string, string> = {
    InvalidSymbol: 'unexpected character',
    InvalidNumberFormat: 'malformed number',
    PropertyNameExpected: 'a property name in double quotes was expected',
    ValueExpected: 'a value was expected',
    ColonExpected: 'a colon was expected',
    CommaExpected: 'a comma was expected',
    CloseBraceExpected: 'a closing } was expected',
    CloseBracketExpected: 'a closing ] was expected',
    EndOfFileExpected: 'the end of the file was expected',
    InvalidCommentToken: 'malformed comment',
    UnexpectedEndOfComment: 'the comment is not closed',
    UnexpectedEndOfString: 'the string is not closed',
    UnexpectedEndOfNumber: 'the number is cut off',
    InvalidUnicode: 'malformed \\u escape',
    InvalidEscapeCharacter: 'malformed escape',
    InvalidCharacter: 'invalid character in a string',
  };
  const code = printParseErrorCode(error.error);
  return names[code] ?? code;
}
