/**
 * The pull-request flow end to end through the command line: a base run gives the baseline, then
 * edits of the spec are compared with it (test/fixtures/gate/greenhouse-vent.mdp.json, a scenario
 * of our own).
 */
import { readFileSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import { FINGERPRINT_NAME, type SarifLog } from '../../server/src/cli/sarif';
import { cli, tempFolder } from '../cli/cli-harness';

const SPEC = 'greenhouse-vent.mdp.json';
const BASE_TEXT = readFileSync(path.join(__dirname, '..', 'fixtures', 'gate', SPEC), 'utf8');

/** A folder holding the spec, and a baseline taken from the base text. */
async function withBaseline(): Promise<{ dir: string; baseline: string }> {
  const dir = tempFolder('pr');
  writeFileSync(path.join(dir, SPEC), BASE_TEXT);
  const base = await cli(['check', '.', '--format', 'json', '--fail-on', 'never'], { cwd: dir });
  expect(base.code).toBe(0);
  const baseline = path.join(dir, 'baseline.json');
  writeFileSync(baseline, base.stdout);
  return { dir, baseline };
}

const transitionLines = (text: string) => text.split('\n').filter((line) => line.trim().startsWith('{ "from"'));

/** The same spec with its transitions in reverse order, one of them spread over lines, and two more comment lines on top. */
function movedOnly(text: string): string {
  const lines = transitionLines(text);
  const reordered = [...lines].reverse().map((line, i, all) => {
    const bare = line.trim().replace(/,$/, '');
    const spread = bare.includes('"wait", "to": {') ? bare.replace(/, "/g, ',\n      "') : bare;
    return `    ${spread}${i < all.length - 1 ? ',' : ''}`;
  });
  const start = text.indexOf(lines[0]);
  const end = text.indexOf(lines[lines.length - 1]) + lines[lines.length - 1].length;
  const body = text.slice(0, start) + reordered.join('\n') + text.slice(end);
  return body.replace('{\n', '{\n  // Reviewed: vent rules.\n  // (Only moved lines in this edit.)\n');
}

function markdownTables(markdown: string): string[][] {
  return markdown
    .split(/\n\n/)
    .filter((block) => block.startsWith('|'))
    .map((block) => block.split('\n').slice(2));
}

describe('pull-request flow through the command line', () => {
  it('an edit that only moves lines shows nothing new, and SARIF fingerprints stay', async () => {
    const { dir, baseline } = await withBaseline();
    const sarifBefore = JSON.parse(
      (await cli(['check', '.', '--format', 'sarif', '--fail-on', 'never'], { cwd: dir })).stdout,
    ) as SarifLog;
    const moved = movedOnly(BASE_TEXT);
    expect(transitionLines(moved)).not.toEqual(transitionLines(BASE_TEXT));
    writeFileSync(path.join(dir, SPEC), moved);

    // --fail-on info: the base's own info finding is not new, so the check passes.
    const result = await cli(['check', '.', '--format', 'markdown', '--baseline', baseline, '--fail-on', 'info'], {
      cwd: dir,
    });
    expect(result.stderr).toBe('');
    expect(result.code).toBe(0);
    expect(result.stdout.split('\n')[0]).toBe('## Episcope: 0 new findings, 0 fixed, 0 specs with changed returns');
    expect(result.stdout).toContain('No change against the baseline: 1 finding as before in 1 file.');
    expect(markdownTables(result.stdout)).toEqual([]);

    const sarifAfter = JSON.parse(
      (await cli(['check', '.', '--format', 'sarif', '--fail-on', 'never'], { cwd: dir })).stdout,
    ) as SarifLog;
    const [before] = sarifBefore.runs[0].results;
    const [after] = sarifAfter.runs[0].results;
    expect(after.ruleId).toBe('tiny-probability');
    expect(after.locations[0].physicalLocation!.region!.startLine).not.toBe(
      before.locations[0].physicalLocation!.region!.startLine,
    );
    expect(after.partialFingerprints[FINGERPRINT_NAME]).toBe(before.partialFingerprints[FINGERPRINT_NAME]);
  });

  it('an edit that adds a bug shows up as exactly that new finding', async () => {
    const { dir, baseline } = await withBaseline();
    const buggy = BASE_TEXT.replace(
      '    { "from": "ajar", "action": "open"',
      '    { "from": "cooled", "action": "wait", "to": "closed", "reward": 0 },\n    { "from": "ajar", "action": "open"',
    );
    writeFileSync(path.join(dir, SPEC), buggy);
    const addedLine = buggy.split('\n').findIndex((line) => line.includes('"from": "cooled"')) + 1;

    const result = await cli(['check', '.', '--format', 'markdown', '--baseline', baseline, '--fail-on', 'warning'], {
      cwd: dir,
    });
    expect(result.code).toBe(1);
    expect(result.stdout.split('\n')[0]).toBe('## Episcope: 1 new finding, 0 fixed, 0 specs with changed returns');
    const tables = markdownTables(result.stdout);
    expect(tables).toHaveLength(1);
    expect(tables[0]).toHaveLength(1);
    expect(tables[0][0]).toMatch(
      new RegExp(
        `^\\| 🟠 warning \\| \`terminal-has-transitions\` \\| \`${SPEC.replace(/\./g, '\\.')}:${addedLine}:\\d+\` \\| 'cooled' is a goal terminal`,
      ),
    );
    expect(result.stdout).toContain('### New findings (1 at or above `--fail-on warning`)');
    expect(result.stdout).toContain('1 finding unchanged from the baseline.');

    // The text format lists what is new below its summary line.
    const text = await cli(['check', '.', '--baseline', baseline], { cwd: dir });
    const tail = text.stdout.trimEnd().split('\n').slice(-2);
    expect(tail[0]).toBe('compared with the baseline: 1 new, 0 fixed, 1 unchanged; start values moved in 0 specs');
    expect(tail[1]).toMatch(
      new RegExp(
        `^  new   ${SPEC.replace(/\./g, '\\.')}:${addedLine}:\\d+ warning terminal-has-transitions 'cooled' is a goal terminal`,
      ),
    );

    // The exit status follows --fail-on applied to new findings only.
    expect((await cli(['check', '.', '--format', 'markdown', '--baseline', baseline], { cwd: dir })).code).toBe(0);
    expect((await cli(['check', '.', '--baseline', baseline, '--fail-on', 'info'], { cwd: dir })).code).toBe(1);
  });

  it('a reward edit that is not a bug moves the start values and nothing else', async () => {
    const { dir, baseline } = await withBaseline();
    const before = JSON.parse(readFileSync(baseline, 'utf8')).files[0].analysis.start.random;
    writeFileSync(
      path.join(dir, SPEC),
      BASE_TEXT.replace(
        '"to": { "cooled": 0.7, "frost": 0.3 }, "reward": 3',
        '"to": { "cooled": 0.7, "frost": 0.3 }, "reward": 1',
      ),
    );
    const json = JSON.parse((await cli(['check', '.', '--format', 'json', '--fail-on', 'never'], { cwd: dir })).stdout);
    expect(json.files[0].analysis.start.random.upper).toBeLessThan(before.lower);

    const result = await cli(['check', '.', '--format', 'markdown', '--baseline', baseline, '--fail-on', 'info'], {
      cwd: dir,
    });
    expect(result.code).toBe(0);
    expect(result.stdout.split('\n')[0]).toBe('## Episcope: 0 new findings, 0 fixed, 1 spec with changed returns');
    const [moved] = markdownTables(result.stdout);
    expect(moved).toHaveLength(1);
    const cells = moved[0].split('|').map((c) => c.trim());
    expect(cells[1]).toBe(`\`${SPEC}\``);
    // The random policy's return moved down; the optimal one (which never waits at 'wide') did not.
    expect(cells[3]).toMatch(/^-[\d.]+ \.\. -[\d.]+ → \*\*-[\d.]+ \.\. -[\d.]+\*\* \(-[\d.]+\)$/);
    expect(cells[2]).not.toContain('→');

    // The text format says the same: before, after and the change of each figure that moved.
    const text = await cli(['check', '.', '--baseline', baseline], { cwd: dir });
    const tail = text.stdout.trimEnd().split('\n').slice(-2);
    expect(tail[0]).toBe('compared with the baseline: 0 new, 0 fixed, 1 unchanged; start values moved in 1 spec');
    const moveText = cells[3].replace('→', '->').replace(/\*\*/g, '');
    expect(tail[1]).toBe(`  moved ${SPEC}: random return ${moveText}`);
  });

  it('an incentive bug introduced by a reward edit shows as its finding, with the goal reach it costs', async () => {
    const { dir, baseline } = await withBaseline();
    // Waiting with the vent ajar no longer pays: the optimal policy now gambles on the wide vent.
    writeFileSync(
      path.join(dir, SPEC),
      BASE_TEXT.replace(
        '"to": { "cooled": 0.5, "ajar": 0.5 }, "reward": 2',
        '"to": { "cooled": 0.5, "ajar": 0.5 }, "reward": 0',
      ),
    );
    const result = await cli(['check', '.', '--format', 'markdown', '--baseline', baseline], { cwd: dir });
    expect(result.stdout.split('\n')[0]).toBe('## Episcope: 1 new finding, 0 fixed, 1 spec with changed returns');
    const [added, moved] = markdownTables(result.stdout);
    expect(added).toHaveLength(1);
    expect(added[0]).toContain('`failure-preferred`');
    const cells = moved[0].split('|').map((c) => c.trim());
    // Goal reach before the edit is exactly 1 (decided from the graph alone), then 0.7.
    expect(cells[4]).toMatch(/^1 → \*\*0\.7\*\* \(-0\.3\)$/);
  });

  it('a malformed baseline stops the run with exit status 2 and one line', async () => {
    const { dir } = await withBaseline();
    writeFileSync(path.join(dir, 'broken.json'), '{"version": 1, "files": [{"path": 3, "findings": []}]}');
    const result = await cli(['check', '.', '--baseline', 'broken.json'], { cwd: dir });
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr).toBe(
      "episcope: baseline 'broken.json' is not an 'episcope check --format json' output: files[0].path must be string\n",
    );
    const missing = await cli(['check', '.', '--baseline', 'nope.json'], { cwd: dir });
    expect(missing.code).toBe(2);
    expect(missing.stderr).toBe("episcope: cannot read baseline 'nope.json': no such file\n");
  });
});
