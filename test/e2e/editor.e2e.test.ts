/**
 * The editor tier: the packaged extension installed into a real VS Code (code-server), driven by
 * Chromium. In a trusted copy of examples/ the scenario reads a planted diagnostic in the Problems
 * panel, applies its quick fix, hovers a state and checks the values against
 * `episcope check --format json --values` on the saved file, and reads the return summary of a
 * TypeScript spec whose model code ran. In an untrusted copy it checks that static findings still
 * appear while model code does not run. Last, the extension-host suite of test/vscode runs in the
 * same editor. Screenshots of each step go to test-results/e2e/, the editor's logs on failure.
 */
import { spawnSync } from 'node:child_process';
import {
  cpSync,
  existsSync,
  mkdirSync,
  mkdtempSync,
  readdirSync,
  readFileSync,
  rmSync,
  statSync,
  symlinkSync,
  writeFileSync,
} from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { Browser } from 'playwright-core';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { CodeServer, locateInstall, REPO_ROOT } from './codeServer';
import { shownInterval } from './shown';
import { packageSuiteRunner, SUITE_MARKER } from './suiteRunner';
import { launchBrowser, VIEWPORT, Workbench } from './workbench';

const RESULTS = join(REPO_ROOT, 'test-results', 'e2e');
const SUITE_REPORT = join(RESULTS, 'extension-host-suite.log');
const timings: Record<string, number> = {};

let server: CodeServer;
let browser: Browser;
let workbench: Workbench;
let trustedExamples: string;
let untrustedExamples: string;
let suiteExamples: string;
let suiteRunnerDir: string;

/** Builds the .vsix with `npm run package` unless EPISCOPE_E2E_VSIX names one already built. */
function packageExtension(): string {
  if (process.env.EPISCOPE_E2E_VSIX) return process.env.EPISCOPE_E2E_VSIX;
  const started = Date.now();
  const result = spawnSync('npm', ['run', 'package'], { cwd: REPO_ROOT, encoding: 'utf8', timeout: 300_000 });
  if (result.status !== 0) throw new Error(`npm run package failed:\n${result.stdout}\n${result.stderr}`);
  timings.package = Date.now() - started;
  const candidates = [REPO_ROOT, join(REPO_ROOT, 'dist')]
    .filter(existsSync)
    .flatMap((dir) =>
      readdirSync(dir)
        .filter((name) => name.endsWith('.vsix'))
        .map((name) => join(dir, name)),
    )
    .filter((path) => statSync(path).mtimeMs >= started - 1_000);
  if (candidates.length !== 1)
    throw new Error(`npm run package should produce one fresh .vsix, found: ${candidates.join(', ') || 'none'}`);
  return candidates[0];
}

/**
 * A copy of examples/ with schemas/ beside it, so the specs' relative `$schema` still resolves, and
 * `node_modules/episcope` linking to this checkout above it, as in a project that installs episcope
 * as a dev dependency (TypeScript specs import their types from it).
 */
function copyExamples(parent: string): string {
  mkdirSync(join(parent, 'node_modules'), { recursive: true });
  cpSync(join(REPO_ROOT, 'examples'), join(parent, 'examples'), { recursive: true });
  cpSync(join(REPO_ROOT, 'schemas'), join(parent, 'schemas'), { recursive: true });
  symlinkSync(REPO_ROOT, join(parent, 'node_modules', 'episcope'), 'dir');
  return join(parent, 'examples');
}

/** What the command line says about one spec (exit 1 only means findings were reported). */
function cliReport(specPath: string): CliFile {
  const result = spawnSync(
    process.execPath,
    [join(REPO_ROOT, 'dist', 'cli.js'), 'check', '--format', 'json', '--values', specPath],
    {
      encoding: 'utf8',
    },
  );
  if (result.status !== 0 && result.status !== 1)
    throw new Error(`episcope check exited ${result.status}:\n${result.stderr}`);
  const report = JSON.parse(result.stdout) as { files: CliFile[] };
  return report.files[0];
}

interface CliInterval {
  lower: number | string;
  upper: number | string;
}
interface CliFile {
  findings: Array<{ rule: string; line: number }>;
  analysis?: {
    start: { optimal: CliInterval };
    values?: Record<string, { optimal: CliInterval; worst: CliInterval; random: CliInterval; best: string[] }>;
  };
}

/** The 1-based line of a TypeScript spec where its lens sits (the default export), to scroll it into view. */
function defaultExportLine(specPath: string): number {
  const index = readFileSync(specPath, 'utf8')
    .split('\n')
    .findIndex((line) => line.startsWith('export default'));
  if (index < 0) throw new Error(`${specPath} has no default export`);
  return index + 1;
}

function printLogs(): void {
  if (!server) return;
  console.error(`--- code-server log ---\n${server.readServerLog().slice(-8_000)}`);
  for (const log of server.extensionHostLogs()) console.error(`--- ${log.path} ---\n${log.text.slice(-8_000)}`);
}

beforeAll(async () => {
  rmSync(RESULTS, { recursive: true, force: true });
  mkdirSync(RESULTS, { recursive: true });
  const install = locateInstall();
  const vsix = packageExtension();
  suiteRunnerDir = mkdtempSync(join(tmpdir(), 'episcope-e2e-suite-runner-'));
  const suiteRunner = await packageSuiteRunner(suiteRunnerDir);
  let started = Date.now();
  server = await CodeServer.start({
    install,
    vsix: [vsix, suiteRunner],
    env: { EPISCOPE_SUITE_REPORT: SUITE_REPORT, EPISCOPE_CLI: join(REPO_ROOT, 'dist', 'cli.js') },
  });
  timings.startServer = Date.now() - started;
  try {
    trustedExamples = copyExamples(join(server.root, 'trusted'));
    untrustedExamples = copyExamples(join(server.root, 'untrusted'));
    suiteExamples = copyExamples(join(server.root, 'suite'));
    writeFileSync(join(suiteExamples, SUITE_MARKER), '');
    started = Date.now();
    browser = await launchBrowser(install, server.env);
    const page = await browser.newPage({ viewport: VIEWPORT });
    workbench = new Workbench(page, RESULTS);
    timings.launchBrowser = Date.now() - started;
  } catch (error) {
    printLogs();
    throw error;
  }
});

beforeEach(({ onTestFailed, task }) => {
  onTestFailed(async () => {
    await workbench?.screenshot(`FAILED-${task.name.replace(/\W+/g, '-')}`).catch(() => undefined);
    printLogs();
  });
});

afterAll(async () => {
  await browser?.close().catch(() => undefined);
  await server?.stop();
  if (server && !process.env.EPISCOPE_E2E_KEEP) server.removeFiles();
  if (suiteRunnerDir) rmSync(suiteRunnerDir, { recursive: true, force: true });
  console.log(`e2e timings (ms): ${JSON.stringify(timings)}`);
});

describe('Episcope in a real VS Code (code-server)', () => {
  it('shows a planted probability-sum error in the Problems panel of a trusted folder', async () => {
    const started = Date.now();
    await workbench.openFolder(server.folderUrl(trustedExamples), true);
    await workbench.restrictedModeIndicator().waitFor({ state: 'detached' });
    await workbench.openFile('conveyor-sorter.mdp.json');
    await workbench.showProblems();
    // examples/conveyor-sorter.mdp.json: the outcomes of "scan" add up to 0.7 + 0.2 + 0.2 = 1.1.
    const row = await workbench.waitForProblem(['probability-sum']);
    expect(row).toContain('episcope');
    expect(row).toMatch(/1\.1/);
    await workbench.page.locator('.monaco-editor .squiggly-error').first().waitFor({ state: 'visible' });
    timings.firstDiagnostic = Date.now() - started;
    await workbench.screenshot('problems-panel');
  });

  it('applies the normalise quick fix and the diagnostic goes', async () => {
    const started = Date.now();
    const entry = await workbench.openQuickFixes('"action": "scan"', '"labelled": 0.7', /normali[sz]e/i);
    await workbench.screenshot('quick-fix-menu');
    await entry.click();
    await workbench.waitForNoProblem(['probability-sum']);
    await workbench.page.locator('.monaco-editor .squiggly-error').first().waitFor({ state: 'detached' });
    await workbench.save();
    // The file on disk now holds the editor's fix, and the command line agrees it is gone.
    const report = cliReport(join(trustedExamples, 'conveyor-sorter.mdp.json'));
    expect(report.findings.map((finding) => finding.rule)).not.toContain('probability-sum');
    timings.quickFix = Date.now() - started;
    await workbench.screenshot('quick-fix-applied');
  });

  it('hovers a state and shows the values the command line prints', async () => {
    const started = Date.now();
    // From the top of the file, so the summary lens above the spec is in view too.
    await workbench.page.keyboard.press('Control+Home');
    const hover = await workbench.hover('"incoming": {', '"incoming"', 'optimal');
    const text = await hover.innerText();
    await workbench.screenshot('hover-state-values', { keepPointer: true });
    const rows = Object.fromEntries(
      (
        await hover
          .locator('tr')
          .evaluateAll((trs) => trs.map((tr) => [...tr.children].map((cell) => (cell.textContent ?? '').trim())))
      ).map((cells) => [cells[0], cells.slice(1)]),
    ) as Record<string, string[]>;
    const cli = cliReport(join(trustedExamples, 'conveyor-sorter.mdp.json')).analysis?.values?.incoming;
    expect(cli, 'episcope check --values reports the state').toBeDefined();
    for (const policy of ['optimal', 'worst', 'random'] as const) {
      expect(rows[policy], `hover row "${policy}" in:\n${text}`).toBeDefined();
      const shown = shownInterval(rows[policy][0]);
      const lower = Number(cli![policy].lower);
      const upper = Number(cli![policy].upper);
      expect(
        shown.lower - shown.tolerance,
        `${policy}: hover ${rows[policy][0]} against CLI [${lower}, ${upper}]`,
      ).toBeLessThanOrEqual(upper);
      expect(
        shown.upper + shown.tolerance,
        `${policy}: hover ${rows[policy][0]} against CLI [${lower}, ${upper}]`,
      ).toBeGreaterThanOrEqual(lower);
    }
    // An independent check of the number itself. Every state of this spec has one action, so the
    // optimal, worst and random values coincide and solve the Bellman equations (common practice):
    //   V(labelled) = 0.97*5 + 0.03*(-5) = 4.7,  V(jammed) = -2 + 0.9 V(incoming),
    //   V(incoming) = -0.1 + 0.9 (7/11 V(labelled) + 2/11 V(incoming) + 2/11 V(jammed)),
    // with the fixed probabilities 0.7/1.1, 0.2/1.1, 0.2/1.1; so V(incoming) = 24.91/7.58 = 3.2863.
    // The tolerance allows for the fix writing the normalised probabilities with finite digits.
    const optimal = shownInterval(rows.optimal[0]);
    expect(Math.abs((optimal.lower + optimal.upper) / 2 - 24.91 / 7.58)).toBeLessThan(0.01);
    timings.hover = Date.now() - started;
  });

  it('runs TypeScript model code in the trusted folder: the code lens shows the return the command line prints', async () => {
    const started = Date.now();
    await workbench.dismissHover();
    await workbench.openFile('shelf-restocking.mdp.ts');
    // Lenses are drawn only for lines in view; this one sits above the default export.
    await workbench.goToLine(defaultExportLine(join(trustedExamples, 'shelf-restocking.mdp.ts')));
    // The lens summarises the start's return ranges, e.g. "Return from the start: optimal 43.75 · …".
    const lens = workbench.codeLens(/optimal/);
    await lens.waitFor({ state: 'visible', timeout: 120_000 });
    const text = (await lens.innerText()).replace(/\u00a0/g, ' ');
    const shown = /optimal ([^·|]+)/.exec(text);
    expect(shown, `no optimal value in the lens: ${text}`).not.toBeNull();
    const optimal = shownInterval(shown![1]);
    const cli = cliReport(join(trustedExamples, 'shelf-restocking.mdp.ts')).analysis?.start.optimal;
    expect(cli, 'episcope check reports the start of shelf-restocking').toBeDefined();
    expect(optimal.lower - optimal.tolerance).toBeLessThanOrEqual(Number(cli!.upper));
    expect(optimal.upper + optimal.tolerance).toBeGreaterThanOrEqual(Number(cli!.lower));
    timings.typescriptLens = Date.now() - started;
    await workbench.screenshot('typescript-spec-lens');
  });

  it('keeps static checks in an untrusted folder (restricted mode)', async () => {
    const started = Date.now();
    await workbench.openFolder(server.folderUrl(untrustedExamples), false);
    await workbench.restrictedModeIndicator().waitFor({ state: 'visible' });
    await workbench.openFile('drone-delivery.mdp.json');
    await workbench.showProblems();
    // examples/drone-delivery.mdp.json: "landing-pda" is a typo for the declared "landing-pad".
    const row = await workbench.waitForProblem(['undeclared-state', 'landing-pda']);
    expect(row).toContain('episcope');
    timings.untrustedDiagnostic = Date.now() - started;
    await workbench.screenshot('untrusted-restricted-mode');
    // Model code of a TypeScript spec does not run here: the lens says so instead of giving values.
    await workbench.openFile('shelf-restocking.mdp.ts');
    await workbench.goToLine(defaultExportLine(join(untrustedExamples, 'shelf-restocking.mdp.ts')));
    await workbench.codeLens(/model code was not run/).waitFor({ state: 'visible', timeout: 60_000 });
    expect(await workbench.codeLens(/optimal/).count()).toBe(0);
    await workbench.screenshot('untrusted-typescript-not-run');
  });

  it('passes the extension-host suite (test/vscode) in code-server', async () => {
    const started = Date.now();
    await workbench.openFolder(server.folderUrl(suiteExamples), true);
    const deadline = Date.now() + 150_000;
    let report = '';
    while (!/^suite: (done|failed)$/m.test(report)) {
      expect(Date.now(), `the suite did not finish; report so far:\n${report}`).toBeLessThan(deadline);
      await new Promise((done) => setTimeout(done, 250));
      report = existsSync(SUITE_REPORT) ? readFileSync(SUITE_REPORT, 'utf8') : '';
    }
    // Indented, so its closing line is not read as the closing line of the whole run.
    console.log(report.replace(/^/gm, '  extension-host suite | '));
    const closing = /^(\d+) passed, (\d+) failed$/m.exec(report);
    expect(closing, report).not.toBeNull();
    expect(Number(closing![1])).toBeGreaterThan(0);
    expect(Number(closing![2])).toBe(0);
    expect(report).toMatch(/^suite: done$/m);
    timings.extensionHostSuite = Date.now() - started;
  });
});
