/**
 * Suppression of findings, in one place for every front: `analyzeParsed` calls `applySuppressions`
 * on each report, so the command line and the language server hide exactly the same findings.
 *
 * Two sources, both of which must give a reason:
 * - `ignore` entries of `episcope.config.json`: `{ "rule": "reward-loop", "path": "examples/*.mdp.json",
 *   "reason": "…" }`, the path a glob relative to the config file's folder;
 * - line comments in a spec (TypeScript, or JSON with comments):
 *   `// episcope-ignore reward-loop: the idle loop is intended` on the finding's line (after code) or
 *   alone on the line above it. Several rules are separated by commas.
 *
 * Comments that suppress nothing, name no rule or give no reason are reported as `suppression`
 * findings on the comment. Config entries that suppress nothing are reported by
 * `unusedIgnoreFindings` once a whole run is done, as `suppression` findings on the config file.
 * Pure: no file system access.
 */
import type { FileReport } from './report';
import type { ResolvedConfig } from './config';
import { RULES } from './rules/registry';
import type { Finding, FindingInput, Severity, SuppressedFinding } from './findings';
import type { Rule } from './rules/types';
import { LineIndex } from './load/lines';
import type { Span } from './load/types';

/** The rule id of findings about suppressions themselves. */
export const SUPPRESSION_RULE_ID = 'suppression';

/** A rule that the fronts report besides the registry's (no check of its own in the pipeline). */
export type FrontRule = Pick<Rule, 'id' | 'defaultSeverity' | 'summary' | 'documentation'>;

export const SUPPRESSION_RULE: FrontRule = {
  id: SUPPRESSION_RULE_ID,
  defaultSeverity: 'warning',
  summary: 'An ignore entry or an episcope-ignore comment suppresses nothing, names no rule, or gives no reason.',
  documentation: [
    'A suppression that no longer matches a finding hides nothing today but will silently hide the',
    'next finding of that rule at that place, which is how real reward bugs slip through review.',
    'Every suppression must also say why the finding is accepted, so that reviewers can judge it.',
    '',
    'Fires on:',
    '- an `// episcope-ignore RULE: reason` comment with no finding of RULE on its line (or on the',
    '  next line when the comment stands alone); the fix deletes the comment;',
    '- such a comment without a rule id, naming an unknown rule, or without a reason after the colon',
    '  (it then suppresses nothing);',
    '- an `ignore` entry of `episcope.config.json` that suppressed no finding in a run that checked the',
    '  files it matches (reported on the config file by the command line).',
    '',
    'Fix: delete the stale suppression, or correct its rule id or path.',
  ].join('\n'),
};

/** Where a suppressed finding was suppressed. */
// A suppressed finding is one of Finding's kin (findings.ts); re-exported for the fronts.
export type { SuppressedFinding, SuppressionSource } from './findings';

export interface SuppressionResult {
  /** The findings that remain, in their original order, plus problems with comments. */
  findings: Finding[];
  suppressed: SuppressedFinding[];
}

export interface SuppressionInput {
  /** The path the front analyses the spec under (absolute, or relative like config.baseDir). */
  path: string;
  text: string;
  lines?: LineIndex;
  findings: readonly Finding[];
  /** False when some rules did not run (cancelled or not analysed): unused comments are then not reported. */
  complete: boolean;
}

/**
 * The pipeline's one call: removes the suppressed findings of a report in place and records them
 * in `report.suppressed`. Comments may name any rule of the registry.
 */
export function suppressReport(report: FileReport, config: ResolvedConfig): void {
  const result = applySuppressions(
    {
      path: report.path,
      text: report.text,
      lines: report.lines,
      findings: report.findings,
      complete: isCompletelyChecked(report),
    },
    config,
    new Set(RULES.map((rule) => rule.id)),
  );
  report.findings = result.findings;
  report.suppressed = result.suppressed;
}

/** Whether every enabled rule ran on the report (no cancellation, no missing analysis, no rule failure). */
export function isCompletelyChecked(report: Pick<FileReport, 'cancelled' | 'notAnalysed' | 'internalErrors'>): boolean {
  return !report.cancelled && report.notAnalysed === undefined && report.internalErrors.length === 0;
}

/** The marker that starts a suppression comment. */
export const IGNORE_MARKER = 'episcope-ignore';

/**
 * Removes the findings that a config ignore or a suppression comment covers, and reports comments
 * that are malformed or unused. `knownRuleIds` defaults to every rule id a comment may name.
 */
export function applySuppressions(
  input: SuppressionInput,
  config: ResolvedConfig,
  knownRuleIds: ReadonlySet<string>,
): SuppressionResult {
  const lines = input.lines ?? new LineIndex(input.text);
  const comments = parseIgnoreComments(input.text, lines);
  const problems: Finding[] = [];
  const reportProblem = (problem: FindingInput): void => {
    const severity = config.rules[SUPPRESSION_RULE_ID] ?? SUPPRESSION_RULE.defaultSeverity;
    if (severity !== 'off') problems.push({ ...problem, rule: SUPPRESSION_RULE_ID, severity });
  };

  // Comments that are well-formed, by the line they cover.
  const byLine = new Map<number, IgnoreComment[]>();
  for (const comment of comments) {
    const problem = commentProblem(comment, knownRuleIds);
    if (problem) {
      reportProblem({ message: problem, span: comment.span });
      continue;
    }
    const list = byLine.get(comment.targetLine) ?? [];
    list.push(comment);
    byLine.set(comment.targetLine, list);
  }

  const kept: Finding[] = [];
  const suppressed: SuppressedFinding[] = [];
  const usedRules = new Map<IgnoreComment, Set<string>>();
  for (const finding of input.findings) {
    const line = lines.position(finding.span.start).line;
    const comment = byLine.get(line)?.find((c) => c.rules.some((r) => r.id === finding.rule));
    if (comment && finding.rule !== SUPPRESSION_RULE_ID) {
      suppressed.push({ finding, reason: comment.reason, source: { kind: 'comment', line: comment.line + 1 } });
      const used = usedRules.get(comment) ?? new Set<string>();
      used.add(finding.rule);
      usedRules.set(comment, used);
      continue;
    }
    kept.push(finding);
  }

  if (input.complete) {
    for (const list of byLine.values()) {
      for (const comment of list) {
        const used = usedRules.get(comment);
        const unused = comment.rules.filter((r) => !used?.has(r.id));
        if (unused.length === 0) continue;
        const names = unused.map((r) => r.id).join(', ');
        const whole = unused.length === comment.rules.length;
        reportProblem({
          message: `episcope-ignore for ${names} suppresses nothing: no ${names} finding starts on line ${comment.targetLine + 1}; remove ${whole ? 'the comment' : `${names} from it`}`,
          span: whole ? comment.span : unused[0].span,
          tags: ['unnecessary'],
          fixes: whole
            ? [
                {
                  title: 'Remove the unused episcope-ignore comment',
                  edits: [{ span: comment.removalSpan, newText: '' }],
                },
              ]
            : undefined,
        });
      }
    }
  }

  // Config ignores come last, so that they can also silence the problems reported above.
  const afterConfig: Finding[] = [];
  const relative = config.baseDir !== undefined ? relativePath(config.baseDir, input.path) : normalizePath(input.path);
  const matchers = config.ignore.map((entry) =>
    relative !== undefined && globMatches(entry.path, relative) ? entry : undefined,
  );
  for (const finding of [...kept, ...problems]) {
    const index = matchers.findIndex(
      (entry) => entry !== undefined && (entry.rule === finding.rule || entry.rule === '*'),
    );
    if (index >= 0) {
      suppressed.push({ finding, reason: config.ignore[index].reason, source: { kind: 'config', ignoreIndex: index } });
    } else {
      afterConfig.push(finding);
    }
  }
  afterConfig.sort((a, b) => a.span.start - b.span.start || a.span.end - b.span.end || a.rule.localeCompare(b.rule));
  return { findings: afterConfig, suppressed };
}

/** Whether a config ignore entry's path glob covers a spec path (relative to the config's folder). */
export function ignoreMatchesPath(config: ResolvedConfig, glob: string, path: string): boolean {
  const relative = config.baseDir !== undefined ? relativePath(config.baseDir, path) : normalizePath(path);
  return relative !== undefined && globMatches(glob, relative);
}

/** What the command line knows about one analysed file when it looks for unused ignores. */
export interface CheckedFile {
  path: string;
  suppressed: readonly SuppressedFinding[];
  /** False when some rules did not run on the file (not analysed, cancelled, or model code not run). */
  complete: boolean;
}

/**
 * The config's `ignore` entries that hid nothing in a run, as `suppression` findings on the entry's
 * span in the config file. An entry is reported only when every file it matches was checked
 * completely, and, when it matches no file at all, only when `allSpecsChecked` says the run covered
 * every spec under the config's folder (a run over one file must not call the others' entries unused).
 */
export function unusedIgnoreFindings(
  config: ResolvedConfig,
  ignoreSpans: readonly Span[],
  files: readonly CheckedFile[],
  allSpecsChecked: boolean,
): Finding[] {
  const severity: Severity | 'off' = config.rules[SUPPRESSION_RULE_ID] ?? SUPPRESSION_RULE.defaultSeverity;
  if (severity === 'off') return [];
  const out: Finding[] = [];
  config.ignore.forEach((entry, index) => {
    const matched = files.filter((f) => ignoreMatchesPath(config, entry.path, f.path));
    const used = matched.some((f) =>
      f.suppressed.some((s) => s.source.kind === 'config' && s.source.ignoreIndex === index),
    );
    if (used || matched.some((f) => !f.complete)) return;
    if (matched.length === 0 && !allSpecsChecked) return;
    const what = entry.rule === '*' ? 'any rule' : entry.rule;
    const message =
      matched.length === 0
        ? `ignore[${index}] (${what} in "${entry.path}") matches no spec file: correct its path or remove it`
        : `ignore[${index}] (${what} in "${entry.path}") suppressed nothing in the ${matched.length} matching spec file${matched.length === 1 ? '' : 's'}: remove it`;
    out.push({
      rule: SUPPRESSION_RULE_ID,
      severity,
      message,
      span: ignoreSpans[index] ?? { start: 0, end: 0 },
      tags: ['unnecessary'],
    });
  });
  return out;
}

// ---------------------------------------------------------------------------------------------
// Suppression comments

export interface IgnoreComment {
  /** 0-based line of the comment and of the line whose findings it covers. */
  line: number;
  targetLine: number;
  rules: Array<{ id: string; span: Span }>;
  reason: string;
  /** Whether the comment text had a colon (a reason may still be empty). */
  hasColon: boolean;
  /** The comment itself. */
  span: Span;
  /** What to delete to remove the comment: its own line when it stands alone, else the comment and the spaces before it. */
  removalSpan: Span;
}

function commentProblem(comment: IgnoreComment, known: ReadonlySet<string>): string | undefined {
  const usage = 'write it as "// episcope-ignore RULE: reason"';
  if (comment.rules.length === 0) return `episcope-ignore names no rule: ${usage}`;
  const unknown = comment.rules.filter((r) => !known.has(r.id));
  if (unknown.length > 0)
    return `episcope-ignore names no rule "${unknown[0].id}" (see 'episcope explain' for the rule ids); it suppresses nothing`;
  if (!comment.hasColon || comment.reason === '')
    return `episcope-ignore for ${comment.rules.map((r) => r.id).join(', ')} gives no reason: ${usage}; it suppresses nothing`;
  return undefined;
}

/** Finds every `// episcope-ignore …` line comment outside strings. */
export function parseIgnoreComments(text: string, lines: LineIndex = new LineIndex(text)): IgnoreComment[] {
  const out: IgnoreComment[] = [];
  for (const comment of scanLineComments(text)) {
    const body = text.slice(comment.start + 2, comment.end);
    const markerMatch = /^\s*episcope-ignore(?![\w-])/.exec(body);
    if (!markerMatch) continue;
    const afterMarker = comment.start + 2 + markerMatch[0].length;
    const rest = text.slice(afterMarker, comment.end);
    const colon = rest.indexOf(':');
    const idsText = colon >= 0 ? rest.slice(0, colon) : rest;
    const rules: Array<{ id: string; span: Span }> = [];
    const idPattern = /[^\s,]+/g;
    for (let m = idPattern.exec(idsText); m; m = idPattern.exec(idsText)) {
      rules.push({ id: m[0], span: { start: afterMarker + m.index, end: afterMarker + m.index + m[0].length } });
    }
    const reason = colon >= 0 ? rest.slice(colon + 1).trim() : '';
    const line = lines.position(comment.start).line;
    const lineStart = lines.offset({ line, character: 0 });
    const standsAlone = text.slice(lineStart, comment.start).trim() === '';
    const targetLine = standsAlone ? nextCodeLine(text, lines, line) : line;
    const removalSpan = standsAlone
      ? {
          start: lineStart,
          end: line + 1 < lines.lineCount ? lines.offset({ line: line + 1, character: 0 }) : comment.end,
        }
      : { start: lineStart + text.slice(lineStart, comment.start).trimEnd().length, end: comment.end };
    out.push({
      line,
      targetLine,
      rules,
      reason,
      hasColon: colon >= 0,
      span: { start: comment.start, end: comment.end },
      removalSpan,
    });
  }
  return out;
}

/** The first line after `line` that is neither blank nor only a line comment (the line itself at the end). */
function nextCodeLine(text: string, lines: LineIndex, line: number): number {
  for (let l = line + 1; l < lines.lineCount; l++) {
    const start = lines.offset({ line: l, character: 0 });
    const end = l + 1 < lines.lineCount ? lines.offset({ line: l + 1, character: 0 }) : text.length;
    const content = text.slice(start, end).trim();
    if (content !== '' && !content.startsWith('//')) return l;
  }
  return line;
}

/**
 * Offsets of the `//` line comments of a JavaScript-like text (TypeScript or JSON with comments),
 * skipping strings, template literals, block comments and regular expression literals. The end is
 * the end of the line. A small scanner, not a parser: it only has to tell comments from code.
 */
export function scanLineComments(text: string): Span[] {
  const out: Span[] = [];
  // Most specs have no line comment at all; a native search answers that without the scan.
  if (!text.includes('//')) return out;
  // Open template literals; each entry counts the braces opened inside its current `${`.
  const templates: number[] = [];
  let lastSignificant = '';
  let i = 0;
  const n = text.length;
  const skipQuoted = (quote: string): void => {
    i++;
    while (i < n && text[i] !== quote && text[i] !== '\n') i += text[i] === '\\' ? 2 : 1;
    i++;
  };
  const skipTemplateText = (): void => {
    // Inside a template literal's text: ends at the closing backtick or at `${`.
    while (i < n) {
      const ch = text[i];
      if (ch === '\\') i += 2;
      else if (ch === '`') {
        i++;
        templates.pop();
        return;
      } else if (ch === '$' && text[i + 1] === '{') {
        i += 2;
        templates[templates.length - 1] = 0;
        return;
      } else i++;
    }
  };
  while (i < n) {
    const ch = text[i];
    if (ch === '/' && text[i + 1] === '/') {
      let end = text.indexOf('\n', i);
      if (end < 0) end = n;
      if (text[end - 1] === '\r') end--;
      out.push({ start: i, end });
      i = end;
    } else if (ch === '/' && text[i + 1] === '*') {
      const end = text.indexOf('*/', i + 2);
      i = end < 0 ? n : end + 2;
    } else if (ch === '"' || ch === "'") {
      skipQuoted(ch);
      lastSignificant = 'a';
    } else if (ch === '`') {
      templates.push(-1);
      i++;
      skipTemplateText();
      lastSignificant = 'a';
    } else if (ch === '/' && regexMayStart(lastSignificant)) {
      i++;
      let inClass = false;
      while (i < n && text[i] !== '\n') {
        const c = text[i];
        if (c === '\\') i++;
        else if (c === '[') inClass = true;
        else if (c === ']') inClass = false;
        else if (c === '/' && !inClass) break;
        i++;
      }
      i++;
      lastSignificant = 'a';
    } else {
      if (templates.length > 0 && templates[templates.length - 1] >= 0) {
        if (ch === '{') templates[templates.length - 1]++;
        else if (ch === '}') {
          if (templates[templates.length - 1] === 0) {
            i++;
            skipTemplateText();
            lastSignificant = 'a';
            continue;
          }
          templates[templates.length - 1]--;
        }
      }
      // Plain blanks are tested first: a regular expression per character is slow on large files.
      if (ch !== ' ' && ch !== '\n' && ch !== '\t' && ch !== '\r' && !/\s/.test(ch)) lastSignificant = ch;
      i++;
    }
  }
  return out;
}

/** After these characters a `/` starts a regular expression rather than a division. */
function regexMayStart(previous: string): boolean {
  return previous === '' || '(,=:[!&|?{};+-*%<>~^'.includes(previous);
}

// ---------------------------------------------------------------------------------------------
// Paths and globs (forward slashes; no file system access)

/** Forward slashes, `.` and `..` resolved, no trailing slash; a Windows drive letter in lower case. */
export function normalizePath(path: string): string {
  const slashed = path.replace(/\\/g, '/').replace(/^([A-Za-z]):/, (_, d: string) => `${d.toLowerCase()}:`);
  const absolute = slashed.startsWith('/');
  const parts: string[] = [];
  for (const part of slashed.split('/')) {
    if (part === '' || part === '.') continue;
    if (part === '..' && parts.length > 0 && parts[parts.length - 1] !== '..') parts.pop();
    else if (part === '..' && absolute) continue;
    else parts.push(part);
  }
  return (absolute ? '/' : '') + parts.join('/');
}

/** `path` relative to the folder `base`, or undefined when it is not inside it (or one is absolute and the other not). */
export function relativePath(base: string, path: string): string | undefined {
  const b = normalizePath(base);
  const p = normalizePath(path);
  if (isAbsolutePath(b) !== isAbsolutePath(p)) return undefined;
  if (b === '' || b === '/') return b === '/' ? p.slice(1) : p;
  if (p === b) return '';
  return p.startsWith(`${b}/`) ? p.slice(b.length + 1) : undefined;
}

function isAbsolutePath(p: string): boolean {
  return p.startsWith('/') || /^[a-z]:/.test(p);
}

/**
 * Whether a glob matches a relative path: `*` within one folder name, `**` any number of folders,
 * `?` one character, `{a,b}` either; a glob that matches a folder matches everything in it.
 */
export function globMatches(glob: string, relative: string): boolean {
  const pattern = normalizePath(glob).replace(/^\.\//, '');
  const regex = new RegExp(`^${globToRegExpSource(pattern)}(?:/.*)?$`);
  return regex.test(relative);
}

function globToRegExpSource(glob: string): string {
  let out = '';
  for (let i = 0; i < glob.length; i++) {
    const ch = glob[i];
    if (ch === '*' && glob[i + 1] === '*') {
      const slashAfter = glob[i + 2] === '/';
      out += slashAfter ? '(?:.*/)?' : '.*';
      i += slashAfter ? 2 : 1;
    } else if (ch === '*') out += '[^/]*';
    else if (ch === '?') out += '[^/]';
    else if (ch === '{') {
      const close = glob.indexOf('}', i);
      if (close < 0) {
        out += '\\{';
        continue;
      }
      const options = glob.slice(i + 1, close).split(',');
      out += `(?:${options.map(globToRegExpSource).join('|')})`;
      i = close;
    } else out += ch.replace(/[.+^$()|[\]\\]/g, '\\$&');
  }
  return out;
}
