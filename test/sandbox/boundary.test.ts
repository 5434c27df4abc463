/**
 * The sandbox boundary, one hostile behaviour per test, always with execution allowed: each test
 * asserts that the effect did not happen (no file, no process, no connection, no secret, clean
 * stdout, a live host), not merely that a finding was reported. Limits hold at a load average of 8
 * on 2 cores (TEST_CALL_TIMEOUT_MS; the wall-clock bounds below are generous multiples of the limits).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { createServer, type Server } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, test } from 'vitest';
import { processMemoryMb } from '../../server/src/sandbox/launch';
import { DIST, ensureBuilt, pathUri, TestClient } from '../lsp/harness';
import { FAST_LIMITS, analyzeTs, counterSpec, findingsOf, writeFolder } from '../typescript/ts-specs';

const ok = `    return [{ state: { n: s.n + 1 }, probability: 1, reward: -1 }];`;
/** A secret in the host's environment, as a CI job has them. */
const SECRET = `episcope-secret-${process.pid}-${Date.now()}`;
process.env.EPISCOPE_BOUNDARY_SECRET = SECRET;

/** Every text a report gives the user: findings and the captured model output. */
function allText(report: Awaited<ReturnType<typeof analyzeTs>>): string {
  return JSON.stringify({ findings: report.findings, output: report.modelOutput ?? '' });
}

/** Runs the built CLI on one spec and returns its status and streams. */
function runCli(
  folder: string,
  spec: string,
  format = 'json',
): { status: number | null; stdout: string; stderr: string } {
  const result = spawnSync(process.execPath, [join(DIST, 'cli.js'), 'check', join(folder, spec), '--format', format], {
    cwd: folder,
    encoding: 'utf8',
    timeout: 120_000,
    killSignal: 'SIGKILL',
    env: { ...process.env, NO_COLOR: '1' },
  });
  return { status: result.status, stdout: result.stdout, stderr: result.stderr };
}

function processesWith(token: string): string[] {
  const ps = spawnSync('ps', ['-eo', 'args'], { encoding: 'utf8' });
  return ps.stdout.split('\n').filter((line) => line.includes(token) && !line.includes('ps -eo'));
}

beforeAll(() => ensureBuilt(), 300_000);

describe('what model code cannot do from inside the sandbox', () => {
  test('it cannot write files, in its own folder or elsewhere', async () => {
    const elsewhere = mkdtempSync(join(tmpdir(), 'episcope-boundary-'));
    const folder = writeFolder({});
    const markers = [join(folder, 'written.txt'), join(elsewhere, 'written.txt')];
    const text = counterSpec(
      ok,
      `import { writeFileSync, appendFileSync, mkdirSync } from 'node:fs';
const refused: string[] = [];
for (const path of ${JSON.stringify(markers)}) {
  try { writeFileSync(path, 'x'); } catch (e) { refused.push('write'); }
  try { appendFileSync(path, 'x'); } catch (e) { refused.push('append'); }
  try { mkdirSync(path + '.d'); } catch (e) { refused.push('mkdir'); }
}
console.log('refused: ' + refused.length);`,
    );
    const path = join(folder, 'spec.mdp.ts');
    writeFileSync(path, text);
    const { analyzeFile } = await import('../../server/src/analyze');
    const { resolveConfig } = await import('../../server/src/config');
    const report = await analyzeFile(path, text, { config: resolveConfig(FAST_LIMITS) });
    for (const marker of markers) {
      expect(existsSync(marker), marker).toBe(false);
      expect(existsSync(`${marker}.d`), marker).toBe(false);
    }
    expect(report.modelOutput).toContain('refused: 6');
    // The model itself is fine and analysed.
    expect(report.model?.stateCount).toBe(4);
  });

  test('it cannot read files outside its folder, nor load a native addon', async () => {
    const text = counterSpec(
      ok,
      `import { readFileSync } from 'node:fs';
let outside = 'read';
try { readFileSync('/etc/passwd', 'utf8'); } catch (e) { outside = 'refused'; }
let addon = 'loaded';
try { process.dlopen({ exports: {} }, '/nonexistent/addon.node'); } catch (e) { addon = 'refused'; }
console.log('outside ' + outside + ', addon ' + addon);`,
    );
    const report = await analyzeTs(text, FAST_LIMITS);
    expect(report.modelOutput).toContain('outside refused, addon refused');
    expect(report.modelOutput).not.toContain('root:');
  });

  test('it cannot start a process, also not a detached one that would outlive the host', async () => {
    const folder = writeFolder({});
    const token = `episcope-detached-${process.pid}-${Date.now()}`;
    const marker = join(folder, 'spawned.txt');
    const script = `sleep 5; echo ${token} > ${marker}`;
    const text = counterSpec(
      ok,
      `import * as cp from 'node:child_process';
const tries: Array<() => unknown> = [
  () => cp.spawn('/bin/sh', ['-c', ${JSON.stringify(script)}], { detached: true, stdio: 'ignore' }).unref(),
  () => cp.execSync(${JSON.stringify(script)}),
  () => cp.fork('/bin/sh'),
  () => new (require('node:worker_threads').Worker)('1', { eval: true }),
];
let refused = 0;
for (const t of tries) { try { t(); } catch (e) { refused++; } }
console.log('refused ' + refused);`,
    );
    const path = join(folder, 'spec.mdp.ts');
    writeFileSync(path, text);
    const { analyzeFile } = await import('../../server/src/analyze');
    const { resolveConfig } = await import('../../server/src/config');
    const report = await analyzeFile(path, text, { config: resolveConfig(FAST_LIMITS) });
    expect(report.modelOutput).toContain('refused 4');
    await new Promise((resolve) => setTimeout(resolve, 6000));
    expect(existsSync(marker)).toBe(false);
    expect(processesWith(token)).toEqual([]);
  }, 60_000);

  describe('the network', () => {
    let server: Server;
    let port = 0;
    let connections = 0;
    beforeAll(async () => {
      server = createServer((socket) => {
        connections++;
        socket.destroy();
      });
      await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', () => resolve()));
      port = (server.address() as { port: number }).port;
    });
    afterAll(() => new Promise<void>((resolve) => server.close(() => resolve())));

    test('it cannot connect to a local listener by any network module, fetch, or the stdout stream class', async () => {
      const text = counterSpec(
        ok,
        `const port = ${port};
const tries: Array<[string, () => unknown]> = [
  ['net', () => require('node:net').connect(port, '127.0.0.1')],
  ['net.Socket', () => new (require('node:net').Socket)().connect(port, '127.0.0.1')],
  ['http', () => require('node:http').get('http://127.0.0.1:' + port + '/')],
  ['https', () => require('node:https').get('https://127.0.0.1:' + port + '/')],
  ['tls', () => require('node:tls').connect(port, '127.0.0.1')],
  ['http2', () => require('node:http2').connect('http://127.0.0.1:' + port)],
  ['dgram', () => require('node:dgram').createSocket('udp4').send('x', port, '127.0.0.1')],
  ['dns', () => require('node:dns').lookup('localhost', () => undefined)],
  ['fetch', () => (globalThis as any).fetch('http://127.0.0.1:' + port + '/')],
  ['stdout class', () => new ((process.stdout as any).constructor)().connect(port, '127.0.0.1')],
  ['module loader', () => require('node:module')._load('net').connect(port, '127.0.0.1')],
];
const refused: string[] = [];
for (const [name, t] of tries) { try { t(); } catch (e) { refused.push(name); } }
console.log('refused: ' + refused.join(','));`,
      );
      const report = await analyzeTs(text, FAST_LIMITS);
      // Give any connection that slipped through time to arrive.
      await new Promise((resolve) => setTimeout(resolve, 1000));
      expect(report.modelOutput).toContain(
        'refused: net,net.Socket,http,https,tls,http2,dgram,dns,fetch,stdout class,module loader',
      );
      expect(connections).toBe(0);
    });
  });

  test("it cannot see the host's environment: a secret is in no finding and no output", async () => {
    const text = counterSpec(
      `    console.log(JSON.stringify(process.env));\n    throw new Error('env: ' + JSON.stringify(process.env) + ' ' + Object.keys(process.env).length);`,
    );
    const report = await analyzeTs(text, FAST_LIMITS);
    const [finding] = findingsOf(report, 'model-error');
    expect(finding.message).toContain('threw Error: env: {');
    expect(allText(report)).not.toContain(SECRET);
    expect(allText(report)).not.toContain('EPISCOPE_BOUNDARY_SECRET');
  });

  test('messages are cut to a readable length, and a thrown number reads "threw 42"', async () => {
    const long = await analyzeTs(counterSpec(`    throw new Error('x'.repeat(100000));`), FAST_LIMITS);
    expect(findingsOf(long, 'model-error')[0].message.length).toBeLessThan(600);
    const number = await analyzeTs(counterSpec(`    throw 42;`), FAST_LIMITS);
    expect(findingsOf(number, 'model-error')[0].message).toContain('outcomes({"n":0}, "up") threw 42;');
    expect(findingsOf(number, 'model-error')[0].message).not.toContain('threw threw');
  });

  test('an error whose name and message getters throw is reported, every time (it once aborted the host natively)', async () => {
    const body = `    const e = new Error('x');
    Object.defineProperty(e, 'message', { get() { throw new Error('no message'); } });
    Object.defineProperty(e, 'name', { get() { throw e; } });
    throw e;`;
    for (let run = 0; run < 6; run++) {
      const report = await analyzeTs(counterSpec(body), FAST_LIMITS);
      const [finding] = findingsOf(report, 'model-error');
      expect(finding?.message, `run ${run}`).toContain(
        'outcomes({"n":0}, "up") threw Error (its message could not be read)',
      );
      expect(report.internalErrors).toEqual([]);
    }
    // Thrown at load, outside any call (an unhandled rejection), and as a thrown object without Error.
    const atLoad = await analyzeTs(
      counterSpec(
        ok,
        `const bad = new Error('x'); Object.defineProperty(bad, 'message', { get() { throw bad; } }); Promise.reject(bad);`,
      ),
      FAST_LIMITS,
    );
    expect(findingsOf(atLoad, 'model-error')[0].message).toContain(
      'failed outside a model call: Error (its message could not be read)',
    );
    const proxy = await analyzeTs(
      counterSpec(
        `    throw new Proxy({}, { get() { throw new Error('trap'); }, getPrototypeOf() { throw new Error('trap'); } });`,
      ),
      FAST_LIMITS,
    );
    expect(findingsOf(proxy, 'model-error')).toHaveLength(1);
  });

  test('forged liveness beats cannot stretch the time limits: the host stops the job at its own limit', async () => {
    // The model swallows the sandbox's own stop and writes fake beats on the beat channel in a loop.
    const body = `    const { writeSync } = require('node:fs');
    for (;;) {
      try { writeSync(4, new Uint8Array([1])); for (let i = 0; i < 1e5; i++) {} } catch (e) {}
      try { Atomics.add(new Int32Array(new SharedArrayBuffer(4)), 0, 1); } catch (e) {}
    }`;
    const jobTimeoutMs = 4000;
    const began = Date.now();
    const report = await analyzeTs(counterSpec(body), {
      thresholds: { ...FAST_LIMITS.thresholds, 'model-error.jobTimeoutMs': jobTimeoutMs },
    });
    const elapsed = Date.now() - began;
    const [finding] = findingsOf(report, 'model-error');
    expect(finding.message).toContain("was still running when the job's time limit of 4 s ran out");
    expect(finding.message).toContain('ignored the sandbox');
    // The host's limit is the job's plus a margin (1.5 s here); the rest is start-up on a loaded machine.
    expect(elapsed).toBeLessThan(60_000);
  }, 90_000);

  test('Buffers past the OS limit fail inside the model instead of growing the process', async () => {
    const memoryMb = 64;
    const limitMb = processMemoryMb(memoryMb);
    const body = `    const held = [];
    try { for (let i = 0; i < 200; i++) held.push(Buffer.alloc(32 * 1024 * 1024, 1)); } catch (e) {}
    throw new Error('held ' + held.length * 32 + ' MB, rss ' + Math.round(process.memoryUsage().rss / 1048576) + ' MB');`;
    const report = await analyzeTs(counterSpec(body), {
      thresholds: { 'model-error.callTimeoutMs': 30_000, 'model-error.memoryMb': memoryMb },
    });
    const message = findingsOf(report, 'model-error')[0].message;
    const match = /held (\d+) MB, rss (\d+) MB/.exec(message);
    expect(match, message).not.toBeNull();
    expect(Number(match![1])).toBeLessThan(limitMb);
    expect(Number(match![2])).toBeLessThan(limitMb);
  }, 90_000);
});

describe('the hosts stay intact', () => {
  const hostile = counterSpec(
    `    process.stdout.write('{"garbage": ');
    require('node:fs').writeSync(1, 'more garbage\\n');
    console.log('Content-Length: 40\\r\\n\\r\\n{"jsonrpc":"2.0","method":"exit"}');
    for (const kill of [() => process.kill(process.ppid, 'SIGKILL'), () => (process as any)._kill(process.ppid, 9),
      () => require('node:child_process').execFileSync('kill', ['-9', String(process.ppid)])]) { try { kill(); } catch (e) {} }
${ok}`,
  );

  test('episcope check --format json: stdout is valid JSON, the model output is a field, the exit status is 0 or 1', () => {
    const folder = writeFolder({ 'spec.mdp.ts': hostile });
    const result = runCli(folder, 'spec.mdp.ts');
    expect([0, 1]).toContain(result.status);
    const output = JSON.parse(result.stdout) as { files: Array<{ modelOutput?: string; findings: unknown[] }> };
    expect(output.files[0].modelOutput).toContain('{"garbage": more garbage');
    expect(result.stdout).not.toContain(SECRET);
    const text = runCli(folder, 'spec.mdp.ts', 'text');
    expect([0, 1]).toContain(text.status);
    expect(text.stdout).toContain('model output (stdout and stderr of the model code):');
  }, 120_000);

  test('the stdio server keeps answering after hostile model code, and logs its output', async () => {
    const folder = writeFolder({ 'spec.mdp.ts': hostile });
    const uri = pathUri(join(folder, 'spec.mdp.ts'));
    const client = new TestClient({
      pull: false,
      workspaceFolder: folder,
      viaCli: true,
      initializationOptions: { trusted: true },
    });
    await client.initialize();
    await client.open(uri, hostile);
    await client.pushed(uri, 1);
    const lenses = await client.connection.sendRequest<Array<{ command: { title: string } }>>('textDocument/codeLens', {
      textDocument: { uri },
    });
    expect(lenses[0].command.title).toMatch(/^Return from the start/);
    expect(client.logs.join('\n')).toContain('model output:');
    expect(await client.stop()).toBe(0);
  }, 120_000);

  test('the stdio server runs no model code by default: static checks only, with a notice in the lens', async () => {
    const folder = writeFolder({});
    const marker = join(folder, 'ran.txt');
    const model = counterSpec(ok, `console.log(${JSON.stringify(marker)});`);
    const uri = pathUri(join(folder, 'spec.mdp.ts'));
    writeFileSync(join(folder, 'spec.mdp.ts'), model);
    type Lens = { command: { title: string } };
    const plain = new TestClient({ pull: false, workspaceFolder: folder, viaCli: true });
    await plain.initialize();
    await plain.open(uri, model);
    await plain.pushed(uri, 1);
    const lenses = await plain.connection.sendRequest<Lens[]>('textDocument/codeLens', { textDocument: { uri } });
    expect(lenses.map((l) => l.command.title)).toEqual([expect.stringMatching(/model code was not run/)]);
    expect(plain.logs.join('\n')).not.toContain('model output:');
    expect(await plain.stop()).toBe(0);

    // The explicit start flag runs it.
    const flagged = new TestClient({
      pull: false,
      workspaceFolder: folder,
      viaCli: true,
      extraArgs: ['--run-model-code'],
    });
    await flagged.initialize();
    await flagged.open(uri, model);
    await flagged.pushed(uri, 1);
    const values = await flagged.connection.sendRequest<Lens[]>('textDocument/codeLens', { textDocument: { uri } });
    expect(values[0].command.title).toMatch(/^Return from the start/);
    expect(await flagged.stop()).toBe(0);
  }, 120_000);

  test('a sandbox that finished well is reused for the next analysis of the same bundle', async () => {
    const folder = writeFolder({});
    const path = join(folder, 'spec.mdp.ts');
    const text = counterSpec(ok, `console.log('pid ' + process.pid);`);
    writeFileSync(path, text);
    const { analyzeFile } = await import('../../server/src/analyze');
    const { resolveConfig } = await import('../../server/src/config');
    const config = resolveConfig(FAST_LIMITS);
    const first = await analyzeFile(path, text, { config });
    const second = await analyzeFile(path, text, { config });
    const pid = /^pid (\d+)/.exec(first.modelOutput ?? '')?.[1];
    expect(pid).toBeDefined();
    expect(Number(pid)).not.toBe(process.pid);
    expect(second.modelOutput).toBe(first.modelOutput);
    expect(second.model?.stateCount).toBe(4);
  });
});
