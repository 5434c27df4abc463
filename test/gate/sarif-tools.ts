/**
 * Outside checks of SARIF output: the SARIF Multitool's `validate` command (Microsoft SARIF SDK,
 * npm @microsoft/sarif-multitool) and ajv against the vendored SARIF 2.1.0 JSON schema.
 */
import Ajv2020 from 'ajv/dist/2020';
import addFormats from 'ajv-formats';
import { spawnSync } from 'node:child_process';
import { chmodSync, mkdtempSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';

/**
 * The Multitool's platform binary. npm does not run the package's postinstall script (which sets
 * the run bit) when install scripts are disabled, so the run bit is set here when it is missing.
 */
export function multitoolBinary(): string {
  const packageJson = require.resolve(`@microsoft/sarif-multitool-${process.platform}/package.json`);
  const binary = path.join(
    path.dirname(packageJson),
    process.platform === 'win32' ? 'Sarif.Multitool.exe' : 'Sarif.Multitool',
  );
  const mode = statSync(binary).mode;
  if ((mode & 0o100) === 0) chmodSync(binary, mode | 0o100);
  return binary;
}

export interface MultitoolResult {
  ruleId: string;
  level: string;
  text: string;
}

/** Runs `Sarif.Multitool validate` on a log and returns its results (errors, warnings and notes). */
export function multitoolValidate(log: unknown): MultitoolResult[] {
  const dir = mkdtempSync(path.join(tmpdir(), 'episcope-sarif-'));
  const input = path.join(dir, 'input.sarif');
  const output = path.join(dir, 'validation.sarif');
  writeFileSync(input, JSON.stringify(log, null, 2));
  const run = spawnSync(
    multitoolBinary(),
    ['validate', input, '--output', output, '--level', 'Error;Warning;Note', '--log', 'ForceOverwrite'],
    {
      encoding: 'utf8',
      timeout: 120_000,
    },
  );
  if (run.status !== 0) throw new Error(`Sarif.Multitool validate exited ${run.status}: ${run.stdout}\n${run.stderr}`);
  const validation = JSON.parse(readFileSync(output, 'utf8')) as {
    runs: Array<{
      results?: Array<{
        ruleId: string;
        level?: string;
        message: { text?: string; id?: string; arguments?: string[] };
      }>;
    }>;
  };
  return (validation.runs[0].results ?? []).map((r) => ({
    ruleId: r.ruleId,
    level: r.level ?? 'warning',
    text: r.message.text ?? `${r.message.id ?? ''} ${(r.message.arguments ?? []).join(' ')}`,
  }));
}

let schemaValidator: (((data: unknown) => boolean) & { errors?: unknown }) | undefined;

/** Validates against the SARIF 2.1.0 JSON schema; returns ajv's errors (empty when valid). */
export function schemaErrors(log: unknown): unknown[] {
  if (!schemaValidator) {
    const schema = JSON.parse(
      readFileSync(path.join(__dirname, '..', 'fixtures', 'sarif', 'sarif-schema-2.1.0.json'), 'utf8'),
    );
    // strict: false because the schema itself lists "required" properties inside anyOf branches.
    const ajv = new Ajv2020({ allErrors: true, strict: false });
    addFormats(ajv);
    schemaValidator = ajv.compile(schema);
  }
  return schemaValidator(log) ? [] : ((schemaValidator.errors as unknown[]) ?? []);
}
