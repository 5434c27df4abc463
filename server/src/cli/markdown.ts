/**
 * `--format markdown`: a short pull-request comment. With a baseline: new findings, fixed findings
 * and the specs whose start values moved, most important first. Without one: the findings and the
 * start's return ranges. GitHub-flavoured Markdown tables; long lists are cut with a count.
 */
import { SEVERITY_ORDER, severityCount, type Severity } from '../rules/types';
import type { Comparison, FindingChange, SpecShift, ValueShift } from './baseline';
import { midpoint } from './baseline';
import type { JsonInterval, JsonOutput, JsonRollouts } from './json-output';
import { parseJsonNumber, textInterval, textProbability } from './numbers';

export interface MarkdownOptions {
  /** Most rows per table before the rest is summarised in one line. */
  maxRows?: number;
  /** The --fail-on level, to say which new findings fail the check. */
  failOn?: Severity | 'never';
}

const SAFETY =
  '_Passing checks means the spec is well-posed, not that a trained policy is safe: for robots, vehicles or plant control follow the applicable safety standards, local codes and licensed engineering practice._';

const ICON: Record<Severity, string> = { error: '🔴 error', warning: '🟠 warning', info: '🔵 info' };

/** The markdown summary of a run, compared with a baseline when one is given. */
export function markdownReport(current: JsonOutput, comparison?: Comparison, options: MarkdownOptions = {}): string {
  const maxRows = options.maxRows ?? 25;
  return (
    (comparison
      ? comparisonMarkdown(current, comparison, maxRows, options.failOn)
      : plainMarkdown(current, maxRows)
    ).join('\n') + '\n'
  );
}

function comparisonMarkdown(
  current: JsonOutput,
  comparison: Comparison,
  maxRows: number,
  failOn?: Severity | 'never',
): string[] {
  const { newFindings, fixedFindings } = comparison;
  const moved = comparison.specs.filter((s) => s.status !== 'unchanged');
  const headline = [
    `${newFindings.length} new finding${newFindings.length === 1 ? '' : 's'}`,
    `${fixedFindings.length} fixed`,
    `${moved.length} spec${moved.length === 1 ? '' : 's'} with changed returns`,
  ].join(', ');
  const out = [`## Episcope: ${headline}`, ''];
  if (newFindings.length === 0 && fixedFindings.length === 0 && moved.length === 0) {
    out.push(
      `No change against the baseline: ${comparison.unchangedFindings} finding${comparison.unchangedFindings === 1 ? '' : 's'} as before in ${current.files.length} file${current.files.length === 1 ? '' : 's'}.`,
      '',
    );
  }
  if (newFindings.length > 0) {
    const failing =
      failOn && failOn !== 'never'
        ? newFindings.filter((c) => SEVERITY_ORDER[c.finding.severity] >= SEVERITY_ORDER[failOn]).length
        : 0;
    const note = failing > 0 ? ` (${failing} at or above \`--fail-on ${failOn}\`)` : '';
    out.push(`### New findings${note}`, '', ...findingTable(newFindings, maxRows), '');
  }
  if (fixedFindings.length > 0) out.push('### Fixed findings', '', ...findingTable(fixedFindings, maxRows), '');
  if (moved.length > 0) {
    out.push(
      '### Start values that moved',
      '',
      '| Spec | Optimal return | Random return | Goal reach (optimal) | Goal reach (random) |',
      '|---|---|---|---|---|',
    );
    for (const spec of moved.slice(0, maxRows)) out.push(shiftRow(spec));
    if (moved.length > maxRows) out.push(`| _and ${moved.length - maxRows} more_ | | | | |`);
    out.push('');
  }
  if (comparison.unchangedFindings > 0 && (newFindings.length > 0 || fixedFindings.length > 0)) {
    out.push(
      `${comparison.unchangedFindings} finding${comparison.unchangedFindings === 1 ? '' : 's'} unchanged from the baseline.`,
      '',
    );
  }
  out.push(SAFETY);
  return out;
}

function plainMarkdown(current: JsonOutput, maxRows: number): string[] {
  const all: FindingChange[] = current.files.flatMap((file) =>
    file.findings.map((finding) => ({ path: file.path, finding })),
  );
  all.sort(
    (a, b) =>
      SEVERITY_ORDER[b.finding.severity] - SEVERITY_ORDER[a.finding.severity] ||
      a.path.localeCompare(b.path) ||
      a.finding.line - b.finding.line,
  );
  const count = (severity: Severity) => all.filter((c) => c.finding.severity === severity).length;
  const plural = (n: number, word: string) => `${n} ${word}${n === 1 ? '' : 's'}`;
  const out = [
    `## Episcope: ${severityCount(count('error'), 'error')}, ${severityCount(count('warning'), 'warning')}, ${severityCount(count('info'), 'info')} in ${plural(current.files.length, 'file')}`,
    '',
  ];
  if (all.length > 0) out.push(...findingTable(all, maxRows), '');
  const analysed = current.files.filter((f) => f.analysis);
  if (analysed.length > 0) {
    out.push(
      '### Returns from the start',
      '',
      '| Spec | Optimal return | Random return | Worst return | Goal reach (optimal) | Best goal reach |',
      '|---|---|---|---|---|---|',
    );
    for (const file of analysed.slice(0, maxRows)) {
      const s = file.analysis!.start;
      out.push(
        `| ${code(file.path)} | ${interval(s.optimal)} | ${interval(s.random)} | ${interval(s.worst)} | ${textProbability(s.reach.optimal.goal)} | ${s.maxGoalReach !== undefined ? textProbability(s.maxGoalReach) : ''} |`,
      );
    }
    if (analysed.length > maxRows) out.push(`| _and ${analysed.length - maxRows} more_ | | | | | |`);
    out.push('');
  }
  out.push(...sampledTable(current, maxRows));
  const notAnalysed = current.files.filter((f) => !f.analysis && f.notAnalysed);
  if (notAnalysed.length > 0)
    out.push(
      `Not analysed: ${notAnalysed.map((f) => `${code(f.path)} (${cell(f.notAnalysed ?? '')})`).join(', ')}.`,
      '',
    );
  out.push(SAFETY);
  return out;
}

/** Estimated returns from rollouts: the learned greedy policy beside the random one, as text, JSON and HTML show them. */
function sampledTable(current: JsonOutput, maxRows: number): string[] {
  const sampled = current.files.filter((f) => f.rollouts?.random || f.rollouts?.learned);
  if (sampled.length === 0) return [];
  const out = [
    '### Estimated returns from rollouts (95% intervals)',
    '',
    '| Spec | Random policy | Learned greedy policy | Learning spent |',
    '|---|---|---|---|',
  ];
  for (const file of sampled.slice(0, maxRows)) {
    const r = file.rollouts!;
    const spent = r.learning ? `${r.learning.spent.episodes} episodes, ${r.learning.spent.steps} steps` : '';
    out.push(`| ${code(file.path)} | ${estimate(r.random)} | ${estimate(r.learned)} | ${spent} |`);
  }
  if (sampled.length > maxRows) out.push(`| _and ${sampled.length - maxRows} more_ | | | |`);
  out.push('');
  return out;
}

/** One policy's estimate with its interval and episode count; a missing estimate stays an empty cell. */
function estimate(r: JsonRollouts | undefined): string {
  if (!r) return '';
  // Estimates carry sampling error: four significant digits say all they can.
  const short = (x: number | null) => (x === null ? '-' : String(Number(x.toPrecision(4))));
  return `${short(r.return.mean)} (${short(r.return.ci95.lower)} .. ${short(r.return.ci95.upper)}), ${r.episodes} episodes`;
}

function findingTable(changes: FindingChange[], maxRows: number): string[] {
  const rows = ['| Severity | Rule | Where | Message |', '|---|---|---|---|'];
  for (const { path, finding } of changes.slice(0, maxRows)) {
    rows.push(
      `| ${ICON[finding.severity]} | ${code(finding.rule)} | ${code(`${path}:${finding.line}:${finding.column}`)} | ${cell(finding.message)} |`,
    );
  }
  if (changes.length > maxRows) rows.push(`| | | | _and ${changes.length - maxRows} more_ |`);
  return rows;
}

function shiftRow(spec: SpecShift): string {
  const name =
    spec.status === 'added'
      ? `${code(spec.path)} (new)`
      : spec.status === 'removed'
        ? `${code(spec.path)} (removed)`
        : code(spec.path);
  return `| ${name} | ${intervalShift(spec.optimal)} | ${intervalShift(spec.random)} | ${probabilityShift(spec.goalOptimal)} | ${probabilityShift(spec.goalRandom)} |`;
}

/** How the shift of one figure is written: Markdown emphasises the new value, text does not. */
export interface ShiftStyle {
  arrow: string;
  emphasis: (text: string) => string;
  none: string;
}

const MARKDOWN_SHIFT: ShiftStyle = { arrow: '→', emphasis: (text) => `**${text}**`, none: '—' };
export const TEXT_SHIFT: ShiftStyle = { arrow: '->', emphasis: (text) => text, none: 'none' };

/** "before → after (change)"; the value alone when it did not move; '' when neither run has it. */
export function intervalShift(shift: ValueShift<JsonInterval>, style: ShiftStyle = MARKDOWN_SHIFT): string {
  const { before, after } = shift;
  if (!before && !after) return '';
  if (!before) return `${style.none} ${style.arrow} ${interval(after!)}`;
  if (!after) return `${interval(before)} ${style.arrow} ${style.none}`;
  const same = interval(before) === interval(after);
  if (same) return interval(after);
  const m0 = midpoint(parseJsonNumber(before.lower), parseJsonNumber(before.upper));
  const m1 = midpoint(parseJsonNumber(after.lower), parseJsonNumber(after.upper));
  const delta = Number.isFinite(m0) && Number.isFinite(m1) ? ` (${signed(m1 - m0)})` : '';
  return `${interval(before)} ${style.arrow} ${style.emphasis(interval(after))}${delta}`;
}

export function probabilityShift(shift: ValueShift<number>, style: ShiftStyle = MARKDOWN_SHIFT): string {
  const { before, after } = shift;
  if (before === undefined && after === undefined) return '';
  if (before === undefined) return `${style.none} ${style.arrow} ${textProbability(after!)}`;
  if (after === undefined) return `${textProbability(before)} ${style.arrow} ${style.none}`;
  if (Number.isNaN(before) && Number.isNaN(after)) return textProbability(after);
  if (Number.isNaN(before) || Number.isNaN(after))
    return `${textProbability(before)} ${style.arrow} ${style.emphasis(textProbability(after))}`;
  if (Math.abs(after - before) <= 1e-9) return textProbability(after);
  return `${textProbability(before)} ${style.arrow} ${style.emphasis(textProbability(after))} (${signed(after - before)})`;
}

/** Whether a shift text shows a move (it has an arrow), rather than an unchanged value. */
export function hasMoved(text: string, style: ShiftStyle): boolean {
  return text.includes(` ${style.arrow} `);
}

function signed(x: number): string {
  const text = String(Number(x.toPrecision(3)));
  return x > 0 ? `+${text}` : text;
}

function interval(i: JsonInterval): string {
  return textInterval(parseJsonNumber(i.lower), parseJsonNumber(i.upper));
}

function code(text: string): string {
  return `\`${text.replace(/`/g, "'")}\``;
}

/** Text for a table cell: one line, pipes escaped, HTML neutralised. */
function cell(text: string): string {
  return text
    .replace(/\s+/g, ' ')
    .replace(/\\/g, '\\\\')
    .replace(/\|/g, '\\|')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .trim();
}
