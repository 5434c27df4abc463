/**
 * `--format sarif`: the run as a SARIF 2.1.0 log (OASIS Static Analysis Results Interchange
 * Format), for code-scanning services. Built from the same JSON output the other formats use, so
 * every format shows the same findings.
 *
 * - tool.driver.rules lists every rule (registry and front rules) with short and full descriptions
 *   and help text; results point at them by ruleId and ruleIndex.
 * - Regions are 1-based, end column exclusive, in UTF-16 code units (the SARIF default, stated in
 *   run.columnKind); URIs are relative to the working folder, resolved through uriBaseId %SRCROOT%.
 * - partialFingerprints["episcopeFindingKey/v1"] hashes the location-independent finding identity
 *   of baseline.ts (rule, path, message skeleton) and an occurrence number, so a finding keeps its
 *   fingerprint when unrelated lines move.
 */
import { createHash } from 'node:crypto';
import { pathToFileURL } from 'node:url';
import type { Severity } from '../rules/types';
import type { FrontRule } from '../suppress';
import { findingKey } from './baseline';
import type { JsonFile, JsonFinding, JsonOutput, JsonRange } from './json-output';

export const SARIF_SCHEMA_URI =
  'https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json';
export const FINGERPRINT_NAME = 'episcopeFindingKey/v1';
const SOURCE_ROOT = '%SRCROOT%';

export interface SarifOptions {
  /** The working folder: relative paths in the output are relative to it. */
  cwd: string;
  toolName: string;
  toolVersion: string;
  /** Every rule that may appear in results (registry and front rules). */
  rules: readonly FrontRule[];
  /** Where to learn about the tool (the package's homepage), when it has one. */
  informationUri?: string;
}

type SarifLevel = 'error' | 'warning' | 'note';
const LEVEL: Record<Severity, SarifLevel> = { error: 'error', warning: 'warning', info: 'note' };

/** A SARIF log as a plain object (the subset of the format this tool writes). */
export interface SarifLog {
  $schema: string;
  version: '2.1.0';
  runs: SarifRun[];
}

interface SarifMessage {
  text: string;
  markdown?: string;
}

interface SarifPhysicalLocation {
  artifactLocation: { uri: string; uriBaseId?: string; index?: number };
  region?: { startLine: number; startColumn: number; endLine: number; endColumn: number };
}

interface SarifLocation {
  id?: number;
  physicalLocation?: SarifPhysicalLocation;
  message?: SarifMessage;
}

interface SarifResult {
  ruleId: string;
  ruleIndex?: number;
  level: SarifLevel;
  message: SarifMessage;
  locations: SarifLocation[];
  relatedLocations?: SarifLocation[];
  codeFlows?: Array<{ message: SarifMessage; threadFlows: Array<{ locations: Array<{ location: SarifLocation }> }> }>;
  partialFingerprints: Record<string, string>;
}

interface SarifRun {
  tool: { driver: Record<string, unknown> };
  originalUriBaseIds: Record<string, { uri: string; description: SarifMessage }>;
  artifacts: Array<{ location: { uri: string; uriBaseId?: string }; roles: string[] }>;
  results: SarifResult[];
  invocations: Array<{ executionSuccessful: boolean; toolExecutionNotifications?: unknown[] }>;
  columnKind: 'utf16CodeUnits';
}

/** Converts a run's JSON output into a SARIF 2.1.0 log. Pure apart from hashing. */
export function toSarif(output: JsonOutput, options: SarifOptions): SarifLog {
  const rules = [...options.rules].sort((a, b) => a.id.localeCompare(b.id));
  const ruleIndex = new Map(rules.map((rule, i) => [rule.id, i]));
  const artifacts = output.files.map((file) => ({ location: artifactLocation(file.path), roles: ['analysisTarget'] }));
  const results: SarifResult[] = [];
  const notifications: unknown[] = [];

  output.files.forEach((file, fileIndex) => {
    const occurrences = new Map<string, number>();
    for (const finding of file.findings) {
      const key = findingKey(finding.rule, file.path, finding.message);
      const occurrence = occurrences.get(key) ?? 0;
      occurrences.set(key, occurrence + 1);
      results.push(resultOf(file, fileIndex, finding, ruleIndex.get(finding.rule), fingerprint(key, occurrence)));
    }
    for (const error of file.internalErrors ?? []) {
      notifications.push({
        level: 'error',
        message: { text: `internal error while checking ${file.path}: ${error}` },
        locations: [{ physicalLocation: { artifactLocation: { ...artifactLocation(file.path), index: fileIndex } } }],
      });
    }
  });

  const cwdUri = pathToFileURL(options.cwd).href.replace(/\/?$/, '/');
  const invocation: SarifRun['invocations'][number] = { executionSuccessful: notifications.length === 0 };
  if (notifications.length > 0) invocation.toolExecutionNotifications = notifications;
  return {
    $schema: SARIF_SCHEMA_URI,
    version: '2.1.0',
    runs: [
      {
        tool: {
          driver: {
            name: options.toolName,
            version: options.toolVersion,
            semanticVersion: options.toolVersion,
            ...(options.informationUri ? { informationUri: options.informationUri } : {}),
            rules: rules.map(ruleDescriptor),
          },
        },
        originalUriBaseIds: { [SOURCE_ROOT]: { uri: cwdUri, description: { text: 'The folder the check ran in.' } } },
        artifacts,
        results,
        invocations: [invocation],
        columnKind: 'utf16CodeUnits',
      },
    ],
  };
}

function resultOf(
  file: JsonFile,
  fileIndex: number,
  finding: JsonFinding,
  ruleIndex: number | undefined,
  print: string,
): SarifResult {
  const location = (range: JsonRange | undefined): SarifPhysicalLocation => {
    const physical: SarifPhysicalLocation = { artifactLocation: { ...artifactLocation(file.path), index: fileIndex } };
    if (range) physical.region = regionOf(range);
    return physical;
  };
  const result: SarifResult = {
    ruleId: finding.rule,
    level: LEVEL[finding.severity],
    message: { text: finding.message },
    locations: [{ physicalLocation: location(finding) }],
    partialFingerprints: { [FINGERPRINT_NAME]: print },
  };
  if (ruleIndex !== undefined) result.ruleIndex = ruleIndex;
  if (finding.related && finding.related.length > 0) {
    result.relatedLocations = finding.related.map((related, i) => ({
      id: i + 1,
      physicalLocation: location(related),
      message: { text: related.message },
    }));
  }
  if (finding.trace.length > 0) {
    const steps = finding.trace.map((step) => {
      const text = step.action !== undefined ? `${step.state} --${step.action}-->` : step.state;
      const loc: SarifLocation = { message: { text } };
      if (step.line !== undefined && step.column !== undefined) {
        loc.physicalLocation = location({
          line: step.line,
          column: step.column,
          endLine: step.line,
          endColumn: step.column,
        });
      }
      return { location: loc };
    });
    result.codeFlows = [
      { message: { text: 'the states and actions involved, in order' }, threadFlows: [{ locations: steps }] },
    ];
  }
  return result;
}

/** SARIF regions: 1-based lines and columns, endColumn just after the last character (as in the JSON output). */
function regionOf(range: JsonRange): NonNullable<SarifPhysicalLocation['region']> {
  const endLine = Math.max(range.endLine, range.line);
  const endColumn = endLine === range.line ? Math.max(range.endColumn, range.column) : range.endColumn;
  return { startLine: range.line, startColumn: range.column, endLine, endColumn };
}

/** A path of the JSON output (relative with forward slashes, or absolute) as a SARIF artifact location. */
export function artifactLocation(path: string): { uri: string; uriBaseId?: string } {
  const isAbsolute = path.startsWith('/') || /^[A-Za-z]:[\\/]/.test(path);
  if (isAbsolute) return { uri: pathToFileURL(path).href };
  return { uri: path.split('/').map(encodeURIComponent).join('/'), uriBaseId: SOURCE_ROOT };
}

function fingerprint(key: string, occurrence: number): string {
  return createHash('sha256').update(`${key}\u0000${occurrence}`).digest('hex').slice(0, 32);
}

function ruleDescriptor(rule: FrontRule): Record<string, unknown> {
  const documentation = rule.documentation.trim();
  const name = pascalCase(rule.id);
  return {
    id: rule.id,
    // SARIF 3.49.7: a name that only differs from the id in case must be left out.
    ...(name.toLowerCase() !== rule.id.toLowerCase() ? { name } : {}),
    shortDescription: { text: rule.summary },
    fullDescription: { text: firstParagraph(documentation) || rule.summary },
    help: { text: documentation || rule.summary, markdown: documentation || rule.summary },
    defaultConfiguration: { level: LEVEL[rule.defaultSeverity] },
  };
}

function pascalCase(id: string): string {
  return id
    .split(/[^A-Za-z0-9]+/)
    .filter(Boolean)
    .map((part) => part[0].toUpperCase() + part.slice(1))
    .join('');
}

/** The documentation's first paragraph as one line of plain text. */
function firstParagraph(markdown: string): string {
  const paragraph = markdown.split(/\n\s*\n/)[0] ?? '';
  return paragraph.replace(/\s*\n\s*/g, ' ').trim();
}
