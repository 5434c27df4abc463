/**
 * Config files and suppressions through the command line: the nearest config applies, its problems
 * and unused ignores are findings on the config file, comments in a spec suppress with a reason.
 */
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import { cli, tempFolder } from '../cli/cli-harness';

const SPEC_TEXT = readFileSync(path.join(__dirname, '..', 'fixtures', 'gate', 'greenhouse-vent.mdp.json'), 'utf8');
// The planted 1e-13 outcome gives one tiny-probability finding on this line.
const TINY_LINE = SPEC_TEXT.split('\n').findIndex((line) => line.includes('"ajar": 1e-13')) + 1;

interface Finding {
  rule: string;
  severity: string;
  message: string;
  line: number;
  column: number;
}

async function checkJson(
  dir: string,
  args: string[] = [],
): Promise<{ code: number; files: Array<{ path: string; findings: Finding[] }>; stderr: string }> {
  const result = await cli(['check', '.', '--format', 'json', '--fail-on', 'info', ...args], { cwd: dir });
  return { code: result.code, files: JSON.parse(result.stdout).files, stderr: result.stderr };
}

function project(config: string | undefined, specText = SPEC_TEXT, specFolder = 'specs'): string {
  const dir = tempFolder('config');
  mkdirSync(path.join(dir, '.git'));
  mkdirSync(path.join(dir, specFolder), { recursive: true });
  writeFileSync(path.join(dir, specFolder, 'greenhouse-vent.mdp.json'), specText);
  if (config !== undefined) writeFileSync(path.join(dir, 'episcope.config.json'), config);
  return dir;
}

describe('config and suppressions through the command line', () => {
  it('without a config the planted finding shows', async () => {
    const run = await checkJson(project(undefined));
    expect(run.files.map((f) => [f.path, f.findings.map((x) => `${x.rule}:${x.line}`)])).toEqual([
      ['specs/greenhouse-vent.mdp.json', [`tiny-probability:${TINY_LINE}`]],
    ]);
    expect(run.code).toBe(1);
  });

  it('an ignore hides it; a stale ignore is a suppression finding on the config file', async () => {
    const config = `{
  "ignore": [
    { "rule": "tiny-probability", "path": "specs/*.mdp.json", "reason": "models a sensor glitch on purpose" },
    { "rule": "dead-end", "path": "specs/old/**", "reason": "retired specs" }
  ]
}`;
    const run = await checkJson(project(config));
    expect(run.files.map((f) => f.path)).toEqual(['specs/greenhouse-vent.mdp.json', 'episcope.config.json']);
    expect(run.files[0].findings).toEqual([]);
    expect(run.files[1].findings.map((f) => [f.rule, f.severity, f.line, f.column, f.message])).toEqual([
      [
        'suppression',
        'warning',
        4,
        5,
        'ignore[1] (dead-end in "specs/old/**") matches no spec file: correct its path or remove it',
      ],
    ]);
    expect(run.code).toBe(1);
  });

  it("a run over one file does not call the other files' ignores unused", async () => {
    const config = '{ "ignore": [ { "rule": "dead-end", "path": "other/*.mdp.json", "reason": "retired" } ] }';
    const dir = project(config);
    const result = await cli(['check', 'specs/greenhouse-vent.mdp.json', '--format', 'json', '--fail-on', 'never'], {
      cwd: dir,
    });
    expect(JSON.parse(result.stdout).files.map((f: { path: string }) => f.path)).toEqual([
      'specs/greenhouse-vent.mdp.json',
    ]);
  });

  it('config problems are findings with positions; the valid rest applies', async () => {
    const config = `{
  "rules": { "tiny-probability": "off", "tiny-probabilty": "warning" },
  "seed": "seven"
}`;
    const run = await checkJson(project(config));
    expect(run.files[0].findings).toEqual([]);
    expect(run.files[1].path).toBe('episcope.config.json');
    expect(run.files[1].findings.map((f) => [f.rule, f.severity, f.line, f.column])).toEqual([
      ['config', 'error', 2, 41],
      ['config', 'error', 3, 11],
    ]);
    expect(run.files[1].findings[0].message).toBe(
      'rules: no rule named "tiny-probabilty" (did you mean "tiny-probability"?)',
    );
    expect(run.files[1].findings[1].message).toBe('seed must be a whole number');
    expect(run.code).toBe(1);
  });

  it('a comment in the spec suppresses with a reason; a comment that hides nothing is reported', async () => {
    const commented = SPEC_TEXT.replace(
      /(\n)(\s*\{ "from": "closed", "action": "wait")/,
      '$1    // episcope-ignore tiny-probability: the 1e-13 outcome models a sensor glitch$1$2',
    ).replace(
      /(\n)(\s*\{ "from": "wide", "action": "wait")/,
      '$1    // episcope-ignore probability-sum: no longer needed$1$2',
    );
    const run = await checkJson(project(undefined, commented));
    const findings = run.files[0].findings;
    expect(findings.map((f) => f.rule)).toEqual(['suppression']);
    expect(findings[0].message).toMatch(
      /^episcope-ignore for probability-sum suppresses nothing: no probability-sum finding starts on line \d+; remove the comment$/,
    );
    expect(commented.split('\n')[findings[0].line - 1].trim()).toBe(
      '// episcope-ignore probability-sum: no longer needed',
    );
  });

  it('a comment in a TypeScript spec suppresses the finding on the next line', async () => {
    const dir = tempFolder('ts-suppress');
    mkdirSync(path.join(dir, '.git'));
    // An invented two-state model whose outcomes call Math.random (unseeded-randomness).
    const source = (comment: string) => `import { defineMdp } from 'episcope';

export default defineMdp({
  name: 'noisy-log',
  discount: 0.9,
  start: 'a',
  actions: (s: string) => (s === 'a' ? ['go'] : []),
  outcomes: (s: string, action: string) => {
    ${comment}
    const tag = Math.random();
    void tag;
    return [{ state: 'done', probability: 1, reward: 1 }];
  },
  terminal: (s: string) => (s === 'done' ? 'goal' : undefined),
});
`;
    writeFileSync(path.join(dir, 'noisy.mdp.ts'), source('// a log tag only'));
    const plain = await checkJson(dir);
    expect(plain.files[0].findings.map((f) => [f.rule, f.line])).toEqual([['unseeded-randomness', 10]]);
    writeFileSync(
      path.join(dir, 'noisy.mdp.ts'),
      source('// episcope-ignore unseeded-randomness: the value only tags a log line'),
    );
    const suppressed = await checkJson(dir);
    expect(suppressed.files[0].findings).toEqual([]);
    expect(suppressed.code).toBe(0);
  });

  it('--config names the config for every spec; a missing one exits 2', async () => {
    const dir = project(undefined);
    writeFileSync(path.join(dir, 'strict.json'), '{ "rules": { "tiny-probability": "error" } }');
    const run = await checkJson(dir, ['--config', 'strict.json']);
    expect(run.files[0].findings.map((f) => [f.rule, f.severity])).toEqual([['tiny-probability', 'error']]);
    const missing = await cli(['check', '.', '--config', 'nope.json'], { cwd: dir });
    expect(missing.code).toBe(2);
    expect(missing.stderr).toBe("episcope: cannot read config 'nope.json': no such file\n");
  });
});
