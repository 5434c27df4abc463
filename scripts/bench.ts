/**
 * `npm run bench`: runs the benchmark sections in order and prints their figures. Each section is
 * a module of scripts/bench/ exporting `run(): Promise<void>`; add one by importing it below.
 * Pass section names to run only those, e.g. `npm run bench -- analysis`.
 */
import { run as analysis } from './bench/analysis';
import { run as typescript } from './bench/typescript';
import { run as lsp } from './bench/lsp';
import { run as solver } from './bench/solver';
import { run as hostile } from './bench/hostile';
import { run as learning } from './bench/learning';

const SECTIONS: ReadonlyArray<{ name: string; run: () => Promise<void> }> = [
  { name: 'analysis', run: analysis },
  { name: 'typescript', run: typescript },
  { name: 'lsp', run: lsp },
  { name: 'solver', run: solver },
  { name: 'hostile', run: hostile },
  { name: 'learning', run: learning },
];

async function main(): Promise<void> {
  const wanted = process.argv.slice(2).filter((arg) => !arg.startsWith('-'));
  const unknown = wanted.filter((name) => !SECTIONS.some((section) => section.name === name));
  if (unknown.length > 0) {
    console.error(`unknown bench section(s): ${unknown.join(', ')}; known: ${SECTIONS.map((s) => s.name).join(', ')}`);
    process.exitCode = 2;
    return;
  }
  for (const section of SECTIONS) {
    if (wanted.length > 0 && !wanted.includes(section.name)) continue;
    console.log(`\n== ${section.name} ==`);
    await section.run();
  }
}

main().catch((error: unknown) => {
  console.error(error instanceof Error ? error.message : String(error));
  process.exitCode = 2;
});
