import Ajv2020 from 'ajv/dist/2020';
import { chmodSync, mkdirSync, readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import outputSchema from '../../schemas/cli-output.schema.json';
import { VERSION, documentedRules } from '../../server/src/cli/main';
import { REPO_ROOT, bound, cli, expectContract, tempFolder } from './cli-harness';
import { deterministicPolicies, evaluatePolicy, randomPolicy, readReferenceMdp } from './reference-mdp';

const EXAMPLES = path.join(REPO_ROOT, 'examples');
const packageJson = JSON.parse(readFileSync(path.join(REPO_ROOT, 'package.json'), 'utf8')) as { version: string };

/** A valid spec of our own (invented numbers): one step from a to a goal worth 10. */
const SMALL_SPEC = JSON.stringify({
  discount: 0.9,
  start: 'a',
  actions: ['go'],
  states: { a: {}, done: { terminal: 'goal' } },
  transitions: [{ from: 'a', action: 'go', to: 'done', reward: 10 }],
});

async function checkJson(argv: string[], cwd = REPO_ROOT) {
  const result = await cli(['check', '--format', 'json', ...argv], { cwd });
  return { ...result, output: JSON.parse(result.stdout) };
}

describe('episcope --version and --help', () => {
  it('prints the package version', async () => {
    const result = await cli(['--version']);
    expect(result).toEqual({ code: 0, stdout: `${packageJson.version}\n`, stderr: '' });
    expect(VERSION).toBe(packageJson.version);
  });

  it('prints help naming each command and option', async () => {
    const top = await cli(['--help']);
    expect(top.code).toBe(0);
    expect(top.stdout).toContain('check [paths...]');
    expect(top.stdout).toContain('explain [RULE]');
    const check = await cli(['check', '--help']);
    expect(check.code).toBe(0);
    for (const flag of ['--format', '--values', '--fail-on']) expect(check.stdout).toContain(flag);
  });

  it('exits 2 with the usage on stderr when no command is given', async () => {
    const result = await cli([]);
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr).toContain('Usage: episcope <command>');
  });

  it('exits 2 with one line on a usage mistake', async () => {
    for (const argv of [['check', '--format', 'yaml'], ['frobnicate'], ['check', '--fail-on']]) {
      const result = await cli(argv);
      expect(result.code, argv.join(' ')).toBe(2);
      expect(result.stdout).toBe('');
      expect(result.stderr.trimEnd().split('\n'), argv.join(' ')).toHaveLength(1);
    }
  });

  it('exits 2 with one line naming the allowed range when a number option is out of range or not a whole number', async () => {
    // The ranges are those of the config file's schema (seed: a 32-bit unsigned number; rollouts: at least 0).
    const cases: Array<[string[], string]> = [
      [
        ['check', 'examples', '--rollouts', '-5'],
        "option '--rollouts' needs a whole number from 0 to 10000000; got -5",
      ],
      [
        ['check', 'examples', '--rollouts', '1.5'],
        "option '--rollouts' needs a whole number from 0 to 10000000; got '1.5'",
      ],
      [
        ['check', 'examples', '--rollouts=99999999999'],
        "option '--rollouts' needs a whole number from 0 to 10000000; got 99999999999",
      ],
      [['check', 'examples', '--seed', 'abc'], "option '--seed' needs a whole number from 0 to 4294967295; got 'abc'"],
      [['check', 'examples', '--seed=-1'], "option '--seed' needs a whole number from 0 to 4294967295; got -1"],
      [
        ['check', 'examples', '--seed', '4294967296'],
        "option '--seed' needs a whole number from 0 to 4294967295; got 4294967296",
      ],
      [['check', 'examples', '--seed', '1e3'], "option '--seed' needs a whole number from 0 to 4294967295; got '1e3'"],
      [['server', '--socket=70000'], "option '--socket' needs a whole number from 1 to 65535; got 70000"],
      [
        ['server', '--stdio', '--clientProcessId', '-3'],
        "option '--clientProcessId' needs a whole number from 1 to 2147483647; got -3",
      ],
    ];
    for (const [argv, message] of cases) {
      const result = await cli(argv);
      expect(result.code, argv.join(' ')).toBe(2);
      expect(result.stdout, argv.join(' ')).toBe('');
      expect(result.stderr.trimEnd().split('\n'), argv.join(' ')).toEqual([
        `episcope: ${message} (see 'episcope --help')`,
      ]);
      expect(result.stderr).not.toMatch(/\bat .+:\d+:\d+/);
    }
  });

  it('accepts the ends of the number ranges', async () => {
    const result = await cli([
      'check',
      'examples/warehouse-picking.mdp.json',
      '--seed',
      '4294967295',
      '--rollouts',
      '0',
      '--format',
      'json',
    ]);
    expect(result.stderr).toBe('');
    expect([0, 1]).toContain(result.code);
  });
});

describe('episcope check --format json', () => {
  it('prints the contract shape for every example, with values (checked field by field and by the schema)', async () => {
    const { code, output, stderr } = await checkJson(['examples', '--values']);
    expect(stderr).toBe('');
    expect(code).toBe(1);
    expectContract(output, true);
    const validate = new Ajv2020({ allErrors: true, strict: false }).compile(outputSchema);
    expect(validate(output), JSON.stringify(validate.errors)).toBe(true);
    const names = readdirSync(EXAMPLES)
      .filter((n) => n.endsWith('.mdp.json') || n.endsWith('.mdp.ts'))
      .sort();
    expect(output.files.map((f: { path: string }) => f.path)).toEqual(names.map((n) => `examples/${n}`));
  });

  it('leaves values out without --values', async () => {
    const { output } = await checkJson(['examples/warehouse-picking.mdp.json']);
    expectContract(output, false);
    expect(output.files[0].analysis.values).toBeUndefined();
  });

  it('writes infinite bounds as "inf" strings: the worst policy of the irrigation example waits forever at discount 1', async () => {
    const { output } = await checkJson(['examples/irrigation-valves.mdp.json', '--values']);
    const a = output.files[0].analysis;
    expect(a.start.worst.upper).toBe('inf');
    expect(a.start.worst.lower).toBe('inf');
    expect(a.values.dry.worst).toEqual({ lower: 'inf', upper: 'inf' });
    expect(typeof a.start.optimal.lower).toBe('number');
  });

  it('reports an infinite optimal return as "inf" for the patrol loop at discount 1', async () => {
    const { output } = await checkJson(['examples/npc-patrol.mdp.json']);
    const file = output.files[0];
    expect(file.analysis.start.optimal).toEqual({ lower: 'inf', upper: 'inf' });
    expect(file.findings.map((f: { rule: string }) => f.rule)).toContain('unbounded-return');
  });

  it('points a finding at the exact text of the problem (the misspelt state id)', async () => {
    const { output } = await checkJson(['examples/drone-delivery.mdp.json']);
    const finding = output.files[0].findings.find((f: { rule: string }) => f.rule === 'undeclared-state');
    expect(finding).toBeDefined();
    const lines = readFileSync(path.join(EXAMPLES, 'drone-delivery.mdp.json'), 'utf8').split('\n');
    // The transition's target, not the header comment that mentions the typo.
    const line = lines.findIndex((l) => l.includes('"state": "landing-pda"'));
    expect(finding.line).toBe(line + 1);
    const column = lines[line].indexOf('"landing-pda"') + 1;
    expect([column, column + 1]).toContain(finding.column);
    expect(finding.endLine).toBe(line + 1);
    expect(finding.endColumn).toBeGreaterThan(finding.column);
  });

  it('bounds contain the random-policy values solved by mathjs, warehouse example (policy evaluation, common practice)', async () => {
    const { output } = await checkJson(['examples/warehouse-picking.mdp.json', '--values']);
    const values = output.files[0].analysis.values;
    const mdp = readReferenceMdp(path.join(EXAMPLES, 'warehouse-picking.mdp.json'));
    const reference = evaluatePolicy(mdp, randomPolicy(mdp));
    expect(reference).toBeDefined();
    for (const [state, v] of Object.entries(reference as Record<string, number>)) {
      expect(bound(values[state].random.lower), state).toBeLessThanOrEqual(v);
      expect(bound(values[state].random.upper), state).toBeGreaterThanOrEqual(v);
      expect(bound(values[state].random.upper) - bound(values[state].random.lower)).toBeLessThanOrEqual(
        1e-6 * Math.max(1, Math.abs(v)),
      );
    }
  });

  it('optimal and worst bounds contain the best and worst over all deterministic policies (warehouse, discount 0.95)', async () => {
    // Puterman, Markov Decision Processes (1994), Theorem 6.2.10: a discounted finite MDP has an
    // optimal deterministic stationary policy, so enumerating those gives V* (and, minimising, the worst).
    const { output } = await checkJson(['examples/warehouse-picking.mdp.json']);
    const start = output.files[0].analysis.start;
    const mdp = readReferenceMdp(path.join(EXAMPLES, 'warehouse-picking.mdp.json'));
    const returns = [...deterministicPolicies(mdp)].map((p) => evaluatePolicy(mdp, p)?.[mdp.start] as number);
    expect(returns).toHaveLength(4);
    const best = Math.max(...returns);
    const worst = Math.min(...returns);
    expect(bound(start.optimal.lower)).toBeLessThanOrEqual(best);
    expect(bound(start.optimal.upper)).toBeGreaterThanOrEqual(best);
    expect(bound(start.worst.lower)).toBeLessThanOrEqual(worst);
    expect(bound(start.worst.upper)).toBeGreaterThanOrEqual(worst);
  });

  it('optimal cost bounds contain the cheapest proper policy (irrigation, minimize, discount 1)', async () => {
    // Bertsekas and Tsitsiklis, "An analysis of stochastic shortest path problems" (1991): with a
    // proper policy and positive costs on every improper one, a deterministic stationary proper
    // policy is optimal. Improper policies make the linear system singular and are skipped.
    const { output } = await checkJson(['examples/irrigation-valves.mdp.json', '--values']);
    const a = output.files[0].analysis;
    const mdp = readReferenceMdp(path.join(EXAMPLES, 'irrigation-valves.mdp.json'));
    const proper = [...deterministicPolicies(mdp)].map((p) => evaluatePolicy(mdp, p)).filter((v) => v !== undefined);
    expect(proper.length).toBeGreaterThan(0);
    for (const state of mdp.states) {
      const cheapest = Math.min(...proper.map((v) => (v as Record<string, number>)[state]));
      expect(bound(a.values[state].optimal.lower), state).toBeLessThanOrEqual(cheapest);
      expect(bound(a.values[state].optimal.upper), state).toBeGreaterThanOrEqual(cheapest);
    }
    expect(a.objective).toBe('minimize');
  });
});

describe('exit codes and --fail-on', () => {
  it('exits 0 for a clean example, 1 when an error is found', async () => {
    expect((await cli(['check', 'examples/warehouse-picking.mdp.json'])).code).toBe(0);
    expect((await cli(['check', 'examples/drone-delivery.mdp.json'])).code).toBe(1);
    expect((await cli(['check', 'examples'])).code).toBe(1);
  });

  it('moves the threshold with --fail-on (a warning-only example: the rover trap)', async () => {
    const rover = 'examples/rover-sampling.mdp.json';
    const { output } = await checkJson([rover]);
    const severities = output.files[0].findings.map((f: { severity: string }) => f.severity);
    expect(severities).toContain('warning');
    expect(severities).not.toContain('error');
    expect((await cli(['check', rover])).code).toBe(0);
    expect((await cli(['check', rover, '--fail-on', 'warning'])).code).toBe(1);
    expect((await cli(['check', rover, '--fail-on', 'info'])).code).toBe(1);
    expect((await cli(['check', 'examples', '--fail-on', 'never'])).code).toBe(0);
  });
});

describe('paths', () => {
  it('exits 2 with one line and no stack trace for a path that does not exist', async () => {
    const result = await cli(['check', 'examples', 'no/such/spec.mdp.json']);
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr).toBe("episcope: cannot read 'no/such/spec.mdp.json': no such file or folder\n");
  });

  it('exits 2 with one line when a part of the path is a file, not a folder', async () => {
    const result = await cli(['check', 'examples/warehouse-picking.mdp.json/inner.mdp.json']);
    expect(result.code).toBe(2);
    expect(result.stdout).toBe('');
    expect(result.stderr).toBe(
      "episcope: cannot read 'examples/warehouse-picking.mdp.json/inner.mdp.json': a part of the path is not a folder\n",
    );
  });

  // Root reads every file whatever its mode, so this case can only be seen by another user.
  it.skipIf(process.getuid?.() === 0)('exits 2 with one line for a file without read permission', async () => {
    const folder = tempFolder('perm');
    const file = path.join(folder, 'locked.mdp.json');
    writeFileSync(file, SMALL_SPEC);
    chmodSync(file, 0o000);
    const result = await cli(['check', folder]);
    expect(result.code).toBe(2);
    expect(result.stderr.trimEnd().split('\n')).toHaveLength(1);
    expect(result.stderr).toContain('permission denied');
  });

  it('searches folders recursively, skips node_modules and dot folders, sorts, and writes nothing', async () => {
    const folder = tempFolder('walk');
    const files = [
      'b.mdp.json',
      'a/z.mdp.json',
      'a/deeper/y.mdp.json',
      'node_modules/x.mdp.json',
      '.hidden/w.mdp.json',
      'a/notes.json',
    ];
    for (const f of files) {
      mkdirSync(path.dirname(path.join(folder, f)), { recursive: true });
      writeFileSync(path.join(folder, f), SMALL_SPEC);
    }
    const listing = () =>
      (readdirSync(folder, { recursive: true }) as string[])
        .sort()
        .map((f) => `${f}:${statSync(path.join(folder, f)).mtimeMs}`);
    const before = listing();
    const { code, output } = await checkJson(['.'], folder);
    expect(code).toBe(0);
    expect(output.files.map((f: { path: string }) => f.path)).toEqual([
      'a/deeper/y.mdp.json',
      'a/z.mdp.json',
      'b.mdp.json',
    ]);
    expect(listing()).toEqual(before);
  });

  it('writes nothing next to TypeScript specs either (their model code runs in a sandbox)', async () => {
    const folder = tempFolder('ts');
    for (const name of readdirSync(EXAMPLES).filter((n) => n.endsWith('.mdp.ts'))) {
      writeFileSync(path.join(folder, name), readFileSync(path.join(EXAMPLES, name)));
    }
    const listing = () =>
      (readdirSync(folder, { recursive: true }) as string[])
        .sort()
        .map((f) => `${f}:${statSync(path.join(folder, f)).mtimeMs}`);
    const before = listing();
    expect(before.length).toBeGreaterThan(0);
    const { code } = await cli(['check', '.', '--format', 'json'], { cwd: folder });
    expect([0, 1]).toContain(code);
    expect(listing()).toEqual(before);
  });

  it('checks a file named explicitly whatever its name, once even when named twice, and shows outside paths absolute', async () => {
    const folder = tempFolder('named');
    const file = path.join(folder, 'spec.json');
    writeFileSync(file, SMALL_SPEC);
    const { code, output } = await checkJson([file, folder, file]);
    expect(code).toBe(0);
    expect(output.files.map((f: { path: string }) => f.path)).toEqual([file.split(path.sep).join('/')]);
    expect(output.files[0].analysis.start.optimal).toEqual({ lower: 10, upper: 10 });
  });

  it('exits 2 when no spec file is found', async () => {
    const folder = tempFolder('empty');
    const result = await cli(['check', folder]);
    expect(result.code).toBe(2);
    expect(result.stderr).toMatch(/^episcope: no spec files \(\*\.mdp\.json, \*\.mdp\.ts\) found in '.*'\n$/);
  });

  it('reports broken JSON as findings with positions, not as a crash', async () => {
    const folder = tempFolder('broken');
    writeFileSync(path.join(folder, 'broken.mdp.json'), '{ "discount": 0.9, "states": {\n  "a": { ');
    const { code, output, stderr } = await checkJson(['.'], folder);
    expect(stderr).toBe('');
    expect(code).toBe(1);
    expectContract(output, false);
    expect(output.files[0].findings.length).toBeGreaterThan(0);
    expect(output.files[0].findings[0].severity).toBe('error');
  });
});

describe('text output', () => {
  it('prints file:line:col severity rule message, the trace state by state, the start summary and a count line', async () => {
    const { code, stdout } = await cli(['check', 'examples']);
    expect(code).toBe(1);
    expect(stdout).not.toContain('\u001b[');
    const lines = stdout.trimEnd().split('\n');
    const findingLine = /^examples\/[\w-]+\.mdp\.json:\d+:\d+ (error|warning|info) [a-z-]+ \S/;
    expect(lines.filter((l) => findingLine.test(l)).length).toBeGreaterThanOrEqual(3);
    expect(stdout).toMatch(/^examples\/drone-delivery\.mdp\.json:\d+:\d+ error undeclared-state /m);
    const specCount = readdirSync(EXAMPLES).filter((n) => /\.mdp\.(json|ts)$/.test(n)).length;
    expect(lines[lines.length - 1]).toMatch(
      new RegExp(`^${specCount} files checked: \\d+ errors?, \\d+ warnings?, \\d+ infos?$`),
    );
    // The patrol loop is listed state by state, indented under its finding.
    const patrol = lines.findIndex((l) => /npc-patrol\.mdp\.json:\d+:\d+ error unbounded-return/.test(l));
    expect(patrol).toBeGreaterThanOrEqual(0);
    expect(lines[patrol + 1]).toMatch(/^ {4}\S/);
  });

  it('summarises the start: optimal, random and worst ranges with goal and failure reach', async () => {
    const { stdout } = await cli(['check', 'examples/warehouse-picking.mdp.json']);
    const lines = stdout.split('\n');
    expect(lines[0]).toMatch(
      /^examples\/warehouse-picking\.mdp\.json: 6 states, 6 transitions, maximize, discount 0\.95$/,
    );
    expect(lines[1]).toMatch(/^\s+return from start\s+goal\s+failure$/);
    expect(lines[2]).toMatch(/^ {2}optimal\s+-?\d[\d.]*( \.\. -?\d[\d.]*)?\s+[\d.]+\s+[\d.]+$/);
    expect(lines[3]).toMatch(/^ {2}random\s+/);
    expect(lines[4]).toMatch(/^ {2}worst\s+/);
    expect(stdout).toMatch(/best goal reach [\d.]+/);
  });

  it('uses colour only on a terminal and never with NO_COLOR', async () => {
    const target = ['check', 'examples/drone-delivery.mdp.json'];
    expect((await cli(target, { isTTY: true })).stdout).toContain('\u001b[31m');
    expect((await cli(target, { isTTY: true, env: { NO_COLOR: '1' } })).stdout).not.toContain('\u001b[');
    expect((await cli(target, { isTTY: false })).stdout).not.toContain('\u001b[');
  });
});

describe('episcope explain', () => {
  it('prints each documented rule with its severity and documentation', async () => {
    for (const rule of documentedRules()) {
      const result = await cli(['explain', rule.id]);
      expect(result.code).toBe(0);
      expect(result.stdout.startsWith(`${rule.id} (default severity: ${rule.defaultSeverity})\n`)).toBe(true);
      expect(result.stdout).toContain(rule.documentation.trim().split('\n')[0]);
      for (const [name, threshold] of Object.entries(rule.thresholds ?? {})) {
        expect(result.stdout).toContain(`${rule.id}.${name} = ${threshold.default}`);
        expect(result.stdout).toContain(threshold.description);
      }
    }
  });

  it('lists the rules without an argument', async () => {
    const result = await cli(['explain']);
    expect(result.code).toBe(0);
    for (const rule of documentedRules())
      expect(result.stdout).toMatch(new RegExp(`^  ${rule.id} +${rule.defaultSeverity} `, 'm'));
  });

  it('exits 2 with a suggestion for a misspelt rule', async () => {
    const result = await cli(['explain', 'supression']);
    expect(result.code).toBe(2);
    expect(result.stderr).toBe("episcope: unknown rule 'supression'; did you mean 'suppression'?\n");
  });
});
