/**
 * Bounded work on hostile input: the whole `episcope check` of specs built to be slow to load
 * (20,000 and 200,000 wrong-typed transitions, 15 MB of blanks). Target: each within 2 s on the
 * 2-core machine. Prints wall time and the number of findings shown.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { blankPaddedSpecText, wrongTypedTransitionsText } from './generators';

const CASES: ReadonlyArray<{ name: string; text: () => string }> = [
  { name: '20,000 wrong-typed transitions', text: () => wrongTypedTransitionsText(20_000) },
  { name: '200,000 wrong-typed transitions', text: () => wrongTypedTransitionsText(200_000) },
  { name: '15 MB of blanks around a valid spec', text: () => blankPaddedSpecText(15_000_000) },
];

export async function run(): Promise<void> {
  const folder = mkdtempSync(join(tmpdir(), 'episcope-bench-hostile-'));
  const cli = join(__dirname, 'cli.js');
  try {
    console.log(`${'input'.padEnd(40)} ${'size'.padStart(9)} ${'check'.padStart(8)}  findings`);
    for (const c of CASES) {
      const text = c.text();
      const path = join(folder, 'hostile.mdp.json');
      writeFileSync(path, text);
      const started = performance.now();
      const result = spawnSync(process.execPath, [cli, 'check', '--format', 'json', path], {
        encoding: 'utf8',
        maxBuffer: 64 * 1024 * 1024,
      });
      const seconds = (performance.now() - started) / 1000;
      let findings = '-';
      try {
        findings = String(
          (JSON.parse(result.stdout) as { files: Array<{ findings: unknown[] }> }).files[0].findings.length,
        );
      } catch {
        findings = `no JSON (exit ${result.status})`;
      }
      console.log(
        `${c.name.padEnd(40)} ${`${(text.length / 1e6).toFixed(1)} MB`.padStart(9)} ${`${seconds.toFixed(2)} s`.padStart(8)}  ${findings}`,
      );
    }
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
  await Promise.resolve();
}
