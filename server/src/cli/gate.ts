/**
 * The pull-request side of `episcope check`: config files (nearest `episcope.config.json`, or
 * `--config`), unused ignores, the baseline comparison, the SARIF and Markdown formats, the HTML
 * report and the progress bar. run.ts drives a CheckGate through one check run:
 * open → (configFor, started, finished) per spec → extraFiles → render / writeReport → exitCode.
 */
import { readFileSync, statSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import packageJson from '../../../package.json';
import type { FileReport } from '../analyze';
import { CONFIG_RULE, findConfigFile, isFile, loadConfigFile, type ConfigFile } from '../config-file';
import { DEFAULT_CONFIG, type ResolvedConfig } from '../config';
import { RULES } from '../rules/registry';
import type { Severity } from '../rules/types';
import { SUPPRESSION_RULE, isCompletelyChecked, unusedIgnoreFindings, type CheckedFile } from '../suppress';
import {
  BaselineError,
  compareWithBaseline,
  newFindingsAtOrAbove,
  parseBaseline,
  type Comparison,
  type FindingChange,
  type SpecShift,
} from './baseline';
import { displayPath, type SpecFile } from './files';
import { fileReportToJson, findingToJson, jsonOutput, type JsonFile, type JsonOutput } from './json-output';
import { TEXT_SHIFT, hasMoved, intervalShift, markdownReport, probabilityShift } from './markdown';
import { ProgressBar, type ProgressStream } from './progress';
import { htmlReport, type ReportFile } from './report-html';
import { toSarif } from './sarif';

/** "  moved a.mdp.json: optimal return 10 -> 4 (-6), goal reach (optimal) 0.9 -> 0.6 (-0.3)": only the figures that moved. */
function movedLine(spec: SpecShift): string {
  const figures: Array<[string, string]> = [
    ['optimal return', intervalShift(spec.optimal, TEXT_SHIFT)],
    ['random return', intervalShift(spec.random, TEXT_SHIFT)],
    ['goal reach (optimal)', probabilityShift(spec.goalOptimal, TEXT_SHIFT)],
    ['goal reach (random)', probabilityShift(spec.goalRandom, TEXT_SHIFT)],
  ];
  const shown = figures.filter(([, text]) => hasMoved(text, TEXT_SHIFT)).map(([label, text]) => `${label} ${text}`);
  const name =
    spec.status === 'added' ? `${spec.path} (new)` : spec.status === 'removed' ? `${spec.path} (removed)` : spec.path;
  const none = spec.status === 'changed' ? 'moved by less than the digits shown' : 'not analysed';
  return `  moved ${name}: ${shown.length > 0 ? shown.join(', ') : none}`;
}

/** A problem with a gate option (baseline, config, report path); the message is one line. */
export class GateError extends Error {}

export interface GateOptions {
  format: string;
  failOn: Severity | 'never';
  baseline?: string;
  report?: string;
  config?: string;
  /** The operands as given, to tell whether a run covered a config file's whole folder. */
  operands: readonly string[];
  cwd: string;
  toolName: string;
  toolVersion: string;
  stderr: ProgressStream;
  /** When the run happened, for the HTML report. */
  now?: () => Date;
}

interface LoadedConfig {
  file: ConfigFile;
  checked: CheckedFile[];
}

export class CheckGate {
  private readonly configsByDir = new Map<string, LoadedConfig | undefined>();
  private readonly explicit?: LoadedConfig;
  private readonly baseline?: JsonOutput;
  private readonly progress: ProgressBar;
  private readonly reportFiles: ReportFile[] = [];
  private comparison?: Comparison;

  private constructor(
    private readonly options: GateOptions,
    files: readonly SpecFile[],
  ) {
    if (options.baseline !== undefined)
      this.baseline = readBaseline(path.resolve(options.cwd, options.baseline), options.baseline);
    if (options.config !== undefined) {
      const absolute = path.resolve(options.cwd, options.config);
      if (!isFile(absolute)) throw new GateError(`cannot read config '${options.config}': no such file`);
      this.explicit = { file: loadConfigFile(absolute), checked: [] };
    }
    if (options.report !== undefined && !options.report.toLowerCase().endsWith('.html')) {
      throw new GateError(`--report needs a file name ending in .html; got '${options.report}'`);
    }
    this.progress = new ProgressBar(options.stderr, files.length);
  }

  /** Reads the baseline and the explicit config up front, so that a bad one stops the run before any work. */
  static open(options: GateOptions, files: readonly SpecFile[]): CheckGate {
    return new CheckGate(options, files);
  }

  /** Whether the JSON of each file must carry per-state values (the HTML report draws them). */
  get wantsValues(): boolean {
    return this.options.report !== undefined;
  }

  /** The configuration for a spec: `--config`, else the nearest episcope.config.json above it, else the defaults. */
  configFor(absolute: string): ResolvedConfig {
    return this.loadedFor(absolute)?.file.config ?? DEFAULT_CONFIG;
  }

  started(display: string): void {
    this.progress.working(display);
  }

  /** Records a checked spec (for unused ignores and the HTML report). */
  finished(report: FileReport, json: JsonFile): void {
    this.progress.tick();
    // The text format prints each file's findings as soon as they are known: make room for them.
    if (this.options.format === 'text') this.progress.clear();
    const loaded = this.loadedFor(path.resolve(this.options.cwd, report.path));
    loaded?.checked.push({
      path: report.path,
      suppressed: report.suppressed ?? [],
      complete: isCompletelyChecked(report),
    });
    if (this.options.report !== undefined) {
      this.reportFiles.push(
        json.analysis && !json.analysis.values
          ? fileReportToJson(report, { values: true, displayPath: json.path })
          : json,
      );
    }
  }

  /**
   * The config files of the run that have findings (their own problems and unused ignores), as
   * extra files of the output. Call once, after every spec is finished.
   */
  extraFiles(): JsonFile[] {
    this.progress.finish();
    const loaded = new Set<LoadedConfig>();
    if (this.explicit) loaded.add(this.explicit);
    for (const config of this.configsByDir.values()) if (config) loaded.add(config);
    const out: JsonFile[] = [];
    for (const { file, checked } of loaded) {
      const covered = this.coversFolder(path.dirname(file.path));
      const findings = [...file.findings, ...unusedIgnoreFindings(file.config, file.ignoreSpans, checked, covered)];
      const severity = file.config.rules[CONFIG_RULE.id];
      const shown = findings
        .filter((f) => f.rule !== CONFIG_RULE.id || severity !== 'off')
        .map((f) => (f.rule === CONFIG_RULE.id && severity && severity !== 'off' ? { ...f, severity } : f));
      if (shown.length === 0) continue;
      shown.sort((a, b) => a.span.start - b.span.start);
      out.push({
        path: displayPath(file.path, this.options.cwd),
        findings: shown.map((f) => findingToJson(f, file.lines)),
      });
    }
    this.reportFiles.push(...out);
    return out;
  }

  /** The output of the formats this module owns (sarif, markdown); undefined for the others. */
  render(results: JsonFile[]): string | undefined {
    const output = jsonOutput(results);
    if (this.options.format === 'sarif') {
      const log = toSarif(output, {
        cwd: this.options.cwd,
        toolName: this.options.toolName,
        toolVersion: this.options.toolVersion,
        rules: [...RULES, SUPPRESSION_RULE, CONFIG_RULE],
        informationUri: (packageJson as { homepage?: string }).homepage,
      });
      return `${JSON.stringify(log, null, 2)}\n`;
    }
    if (this.options.format === 'markdown')
      return markdownReport(output, this.compare(output), { failOn: this.options.failOn });
    return undefined;
  }

  /** For the text format with --baseline: the new and fixed findings, one per line; else ''. */
  baselineText(results: JsonFile[]): string {
    const comparison = this.compare(jsonOutput(results));
    if (!comparison) return '';
    const line = (label: string, c: FindingChange) =>
      `  ${label} ${c.path}:${c.finding.line}:${c.finding.column} ${c.finding.severity} ${c.finding.rule} ${c.finding.message}`;
    const moved = comparison.specs.filter((s) => s.status !== 'unchanged');
    return (
      [
        `compared with the baseline: ${comparison.newFindings.length} new, ${comparison.fixedFindings.length} fixed, ${comparison.unchangedFindings} unchanged; start values moved in ${moved.length} spec${moved.length === 1 ? '' : 's'}`,
        ...comparison.newFindings.map((c) => line('new  ', c)),
        ...comparison.fixedFindings.map((c) => line('fixed', c)),
        ...moved.map(movedLine),
      ].join('\n') + '\n'
    );
  }

  /** Writes the HTML report when --report was given. */
  writeReport(): void {
    if (this.options.report === undefined) return;
    const html = htmlReport(
      { files: this.reportFiles },
      {
        toolName: this.options.toolName,
        toolVersion: this.options.toolVersion,
        generatedAt: (this.options.now ?? (() => new Date()))(),
      },
    );
    try {
      writeFileSync(path.resolve(this.options.cwd, this.options.report), html);
    } catch (error) {
      throw new GateError(
        `cannot write the report '${this.options.report}': ${error instanceof Error ? error.message.split('\n')[0] : String(error)}`,
      );
    }
  }

  /**
   * With a baseline, the exit code follows --fail-on applied to the new findings only (1 when one
   * is at or above it, else 0); without one, undefined (the usual rule applies).
   */
  exitCode(results: JsonFile[]): number | undefined {
    const comparison = this.compare(jsonOutput(results));
    if (!comparison) return undefined;
    return newFindingsAtOrAbove(comparison, this.options.failOn).length > 0 ? 1 : 0;
  }

  private compare(output: JsonOutput): Comparison | undefined {
    if (!this.baseline) return undefined;
    this.comparison ??= compareWithBaseline(this.baseline, output);
    return this.comparison;
  }

  private loadedFor(absolute: string): LoadedConfig | undefined {
    if (this.explicit) return this.explicit;
    const dir = path.dirname(absolute);
    if (!this.configsByDir.has(dir)) {
      const found = findConfigFile(dir);
      const existing = found ? [...this.configsByDir.values()].find((c) => c?.file.path === found) : undefined;
      this.configsByDir.set(dir, existing ?? (found ? { file: loadConfigFile(found), checked: [] } : undefined));
    }
    return this.configsByDir.get(dir);
  }

  /** Whether some operand is a folder containing `folder` (so every spec under it was checked). */
  private coversFolder(folder: string): boolean {
    return this.options.operands.some((operand) => {
      const absolute = path.resolve(this.options.cwd, operand);
      const relative = path.relative(absolute, folder);
      return isDirectory(absolute) && !relative.startsWith('..') && !path.isAbsolute(relative);
    });
  }
}

function readBaseline(absolute: string, name: string): JsonOutput {
  let text: string;
  try {
    text = readFileSync(absolute, 'utf8');
  } catch (error) {
    const code = (error as NodeJS.ErrnoException).code;
    throw new GateError(
      `cannot read baseline '${name}': ${code === 'ENOENT' ? 'no such file' : (code ?? String(error))}`,
    );
  }
  try {
    return parseBaseline(text, name);
  } catch (error) {
    if (error instanceof BaselineError) throw new GateError(error.message);
    throw error;
  }
}

function isDirectory(p: string): boolean {
  try {
    return statSync(p).isDirectory();
  } catch {
    return false;
  }
}
