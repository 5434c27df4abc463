/**
 * Language-server latency, measured the way an editor sees it: the built dist/server.js over stdio,
 * a JSON-RPC client timing each round trip. Figures:
 * - time from an edit (didChange) to its fresh diagnostics (publishDiagnostics of that version), for a
 *   1k-state and a 100k-state JSON spec (the warehouse specs of test/lsp/warehouse-spec.ts) and a
 *   100x100 slippery grid at discount 0.99 (scripts/bench/generators.ts). An edit's analysis starts
 *   from the document's last solution (warm); closing and reopening the document drops it, so
 *   the time from reopening to diagnostics is the same analysis cold;
 * - the 1k-state spec's first edits when the user pauses a second after opening it (in a server of
 *   its own, since its worker practises once);
 * - hover latency with nothing else to do;
 * - hover latency, and the small spec's edit-to-diagnostics time, while the 100k-state spec is being
 *   analysed, which shows whether the big analysis blocks the editor.
 * Targets from the issues: 1k states <= 100 ms p95 from edit to diagnostics; hover <= 20 ms p95;
 * 10k-state grid <= 1 s with warm start; 100k states <= 3 s.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { TestClient, pathUri, positionAt } from '../../test/lsp/harness';
import { warehouseSpecText } from '../../test/lsp/warehouse-spec';
import { slipperyGridSpec } from './generators';

const EDITS = 20;
const GRID_EDITS = 5;
const HOVERS = 200;
/** A user reads the new diagnostics before the first edit; the worker practises meanwhile (lsp/practice.ts). */
const PAUSE_MS = 1000;
const PAUSED_EDITS = 3;
/** The 100k-state analysis may take minutes on a loaded machine; the bench waits for it. */
const LARGE_TIMEOUT_MS = 30 * 60_000;

export async function run(): Promise<void> {
  const folder = mkdtempSync(join(tmpdir(), 'episcope-bench-lsp-'));
  const client = new TestClient({ pull: false, workspaceFolder: folder, dist: __dirname });
  try {
    await client.initialize();
    // Figures scale with what else the machine runs; the load says how busy it was.
    console.log(
      `machine: ${cpus().length} cores, load average ${loadavg()
        .map((l) => l.toFixed(1))
        .join(' ')} at the start`,
    );
    const small = await openSpec(client, folder, 'small', warehouseSpecText(1_000), '"action":"hop"');
    console.log(`1k-state spec (${mb(small.text)}): opened, first diagnostics after ${ms(small.openMs)}`);
    const statusMark = client.statuses.length;
    const smallEdits = await timeEdits(client, small, EDITS);
    console.log(`  edit -> fresh diagnostics (warm), ${EDITS} edits: ${summary(smallEdits)}   (target p95 <= 100 ms)`);
    console.log(
      `    of which the pipeline in the worker (analyzeFile and the snapshot): ${summary(workerTimes(client, small.uri, statusMark))}`,
    );
    const paused = await firstEditsAfterPause(folder);
    console.log(
      `  first ${PAUSED_EDITS} edits ${PAUSE_MS} ms after opening, in a server of its own (its worker practises meanwhile): ${summary(paused)}`,
    );
    const smallCold = await timeReopens(client, small, 5);
    console.log(`  reopen -> diagnostics (cold), 5 reopens: ${summary(smallCold)}`);
    const idleHovers = await timeHovers(client, small, HOVERS);
    console.log(`  hover, idle, ${HOVERS} hovers: ${summary(idleHovers)}   (target p95 <= 20 ms)`);

    const grid = await openSpec(
      client,
      folder,
      'grid',
      JSON.stringify(slipperyGridSpec({ size: 100, discount: 0.99 })),
      '"from":"r50c50"',
    );
    console.log(
      `100x100 slippery grid at discount 0.99 (${mb(grid.text)}): opened, first diagnostics after ${ms(grid.openMs)}`,
    );
    const gridMark = client.statuses.length;
    const gridEdits = await timeEdits(client, grid, GRID_EDITS);
    console.log(`  edit -> fresh diagnostics (warm), ${GRID_EDITS} edits: ${summary(gridEdits)}   (target <= 1 s)`);
    console.log(`    of which the pipeline in the worker: ${summary(workerTimes(client, grid.uri, gridMark))}`);
    const gridReopenMark = client.statuses.length;
    const gridCold = await timeReopens(client, grid, 2);
    console.log(
      `  reopen -> diagnostics (cold), 2 reopens: ${summary(gridCold)} (pipeline in the worker ${summary(workerTimes(client, grid.uri, gridReopenMark))})`,
    );
    await close(client, grid);

    const large = await openSpec(client, folder, 'large', warehouseSpecText(100_000), '"action":"hop"');
    console.log(`100k-state spec (${mb(large.text)}): opened, first diagnostics after ${ms(large.openMs)}`);
    const largeMark = client.statuses.length;
    const quietLarge = await timeEdits(client, large, 2);
    console.log(
      `  edit -> fresh diagnostics (warm), nothing else running: ${summary(quietLarge)} (pipeline in the worker ${summary(workerTimes(client, large.uri, largeMark))})   (target <= 3 s)`,
    );
    const largeReopenMark = client.statuses.length;
    const largeCold = await timeReopens(client, large, 1);
    console.log(
      `  reopen -> diagnostics (cold): ${summary(largeCold)} (pipeline in the worker ${summary(workerTimes(client, large.uri, largeReopenMark))})`,
    );

    // One edit of the large spec, with the editor kept busy meanwhile: hovers on both specs every
    // 20 ms and edits of the small spec, each timed, until the large spec's fresh diagnostics arrive.
    const during = { smallHovers: [] as number[], largeHovers: [] as number[], smallEdits: [] as number[] };
    const largeEdit = timeEdits(client, large, 1);
    let busy = true;
    const background = (async () => {
      while (busy) {
        during.smallHovers.push(await timeHover(client, small));
        during.largeHovers.push(await timeHover(client, large));
        if (during.smallHovers.length % 10 === 0) during.smallEdits.push(...(await timeEdits(client, small, 1)));
        await new Promise((r) => setTimeout(r, 20));
      }
    })();
    const [largeMs] = await largeEdit;
    busy = false;
    await background;
    console.log(`  edit -> fresh diagnostics with the editor busy (below): ${ms(largeMs)}`);
    console.log(`  while it was analysed: hover on the 1k spec ${summary(during.smallHovers)}`);
    console.log(`                         hover on the 100k spec (previous analysis) ${summary(during.largeHovers)}`);
    console.log(`                         1k spec edit -> diagnostics ${summary(during.smallEdits)}`);
    console.log(
      `machine: load average ${loadavg()
        .map((l) => l.toFixed(1))
        .join(' ')} at the end`,
    );
    await client.stop();
  } finally {
    if (client.process.exitCode === null) client.process.kill();
    rmSync(folder, { recursive: true, force: true });
  }
}

/** The first edits of the 1k-state spec in a new server, the first one PAUSE_MS after its first diagnostics. */
async function firstEditsAfterPause(folder: string): Promise<number[]> {
  const client = new TestClient({ pull: false, workspaceFolder: folder, dist: __dirname });
  try {
    await client.initialize();
    const spec = await openSpec(client, folder, 'small-paused', warehouseSpecText(1_000), '"action":"hop"');
    await new Promise((resolve) => setTimeout(resolve, PAUSE_MS));
    return await timeEdits(client, spec, PAUSED_EDITS);
  } finally {
    await client.stop();
  }
}

interface OpenSpec {
  uri: string;
  text: string;
  version: number;
  /** The edits toggle the first step reward after this text. */
  editAnchor: string;
  openMs: number;
  /** Positions of bay declarations to hover, found before any timing (searching 15 MB between hovers would load the client, not the server). */
  hoverTargets: Array<{ line: number; character: number }>;
}

async function openSpec(
  client: TestClient,
  folder: string,
  name: string,
  text: string,
  editAnchor: string,
): Promise<OpenSpec> {
  const path = join(folder, `${name}.mdp.json`);
  writeFileSync(path, text);
  const uri = pathUri(path);
  const started = performance.now();
  await client.open(uri, text);
  await client.pushed(uri, 1, 0, LARGE_TIMEOUT_MS);
  return {
    uri,
    text,
    version: 1,
    editAnchor,
    openMs: performance.now() - started,
    hoverTargets: declarationPositions(text, 200),
  };
}

async function close(client: TestClient, spec: OpenSpec): Promise<void> {
  await client.connection.sendNotification('textDocument/didClose', { textDocument: { uri: spec.uri } });
}

/** Closes and reopens the document (the server forgets its last solution); resolves with each reopen's time to its diagnostics. */
async function timeReopens(client: TestClient, spec: OpenSpec, count: number): Promise<number[]> {
  const times: number[] = [];
  for (let i = 0; i < count; i++) {
    await close(client, spec);
    spec.version++;
    const mark = client.mark();
    const started = performance.now();
    await client.open(spec.uri, spec.text, spec.version);
    await client.pushed(spec.uri, spec.version, mark, LARGE_TIMEOUT_MS);
    times.push(performance.now() - started);
  }
  return times;
}

/** Up to `count` bay declarations spread over the states block, in one pass over the lines. */
function declarationPositions(text: string, count: number): Array<{ line: number; character: number }> {
  const lines = text.split('\n');
  const declarations: number[] = [];
  const end = lines.indexOf('  },');
  for (let line = 0; line < end; line++) if (/^ {2}"b\d+": \{/.test(lines[line])) declarations.push(line);
  const step = Math.max(1, Math.floor(declarations.length / count));
  return declarations
    .filter((_, i) => i % step === 0)
    .slice(0, count)
    .map((line) => ({ line, character: 3 }));
}

/** Edits the first reward after the spec's anchor back and forth (-1, -2); resolves with each edit's time to its diagnostics. */
async function timeEdits(client: TestClient, spec: OpenSpec, count: number): Promise<number[]> {
  const times: number[] = [];
  for (let i = 0; i < count; i++) {
    const anchor = spec.text.indexOf(spec.editAnchor);
    const one = spec.text.indexOf('"reward":-1}', anchor);
    const two = spec.text.indexOf('"reward":-2}', anchor);
    // Whichever of the two rewards comes first is the one the previous edit left.
    const offset = two >= 0 && (one < 0 || two < one) ? two : one;
    const before = offset === two ? '"reward":-2}' : '"reward":-1}';
    const after = before === '"reward":-1}' ? '"reward":-2}' : '"reward":-1}';
    const start = positionAt(spec.text, offset);
    const range = { start, end: { line: start.line, character: start.character + before.length } };
    spec.text = spec.text.slice(0, offset) + after + spec.text.slice(offset + before.length);
    spec.version++;
    const mark = client.mark();
    const started = performance.now();
    await client.change(spec.uri, spec.version, [{ range, text: after }]);
    await client.pushed(spec.uri, spec.version, mark, LARGE_TIMEOUT_MS);
    times.push(performance.now() - started);
  }
  return times;
}

async function timeHovers(client: TestClient, spec: OpenSpec, count: number): Promise<number[]> {
  const times: number[] = [];
  for (let i = 0; i < count; i++) times.push(await timeHover(client, spec, i));
  return times;
}

/** One hover on the declaration of a bay (a different one each time), timed. */
async function timeHover(client: TestClient, spec: OpenSpec, index = hoverCounter++): Promise<number> {
  const position = spec.hoverTargets[index % spec.hoverTargets.length];
  const started = performance.now();
  const hover = await client.hover(spec.uri, position);
  const elapsed = performance.now() - started;
  if (!hover) throw new Error(`no hover at line ${position.line + 1} of ${spec.uri}`);
  return elapsed;
}

let hoverCounter = 0;

/** The analysis times the server reported (its status line ends with the duration) since the status numbered `after`. */
function workerTimes(client: TestClient, uri: string, after: number): number[] {
  return client.statuses
    .slice(after)
    .filter((s) => s.uri === uri && s.state === 'done')
    .map((s) => /· ([\d.]+) (ms|s)$/.exec(s.text))
    .filter((m): m is RegExpExecArray => m !== null)
    .map((m) => Number(m[1]) * (m[2] === 's' ? 1000 : 1));
}

function percentile(values: number[], p: number): number {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1))];
}

function summary(values: number[]): string {
  if (values.length === 0) return 'none measured';
  return `p50 ${ms(percentile(values, 50))}, p95 ${ms(percentile(values, 95))}, max ${ms(Math.max(...values))} (n=${values.length})`;
}

function ms(value: number): string {
  return value >= 1000 ? `${(value / 1000).toFixed(2)} s` : `${value.toFixed(1)} ms`;
}

function mb(text: string): string {
  return `${(text.length / 1e6).toFixed(1)} MB`;
}
