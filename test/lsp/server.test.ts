/**
 * The language server driven over stdio by a JSON-RPC client, as any editor would drive it: the
 * built dist/server.js (and `episcope server --stdio`), a push client and a pull client.
 *
 * Expected values come from the Bellman equations solved by hand (Sutton and Barto, Reinforcement
 * Learning, 2nd ed., Section 3.5 (v_pi) and 3.6 (v*); section numbers from memory) for a three-state
 * spec of our own, where each equation has one unknown.
 */
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Diagnostic } from 'vscode-languageserver-protocol';
import { TestClient, applyTextEdits, ensureBuilt, pathUri, positionOf, ROOT, type LspTextEdit } from './harness';
import { warehouseSpecText } from './warehouse-spec';

/**
 * a --go--> b pays 1; a --stay--> a pays 0; b --go|stay--> g (goal) pays 10; discount 0.9.
 * By hand: V*(b) = 10; V*(a) = max(1 + 0.9 * 10, 0 + 0.9 V*(a)) = 10; Q*(a, stay) = 0.9 * 10 = 9.
 * Uniform random policy at a: v = 0.5 (1 + 0.9 * 10) + 0.5 (0.9 v), so v = 5 / 0.55 = 9.0909...
 * Worst policy at a: w = min(10, 0.9 w), so w = 0 (stay forever). Goal reach from a under the
 * random policy: p = 0.5 + 0.5 p, so p = 1.
 */
const CHAIN = `{
  "name": "two-step-chain",
  "discount": 0.9,
  "start": "a",
  "actions": ["go", "stay"],
  "states": { "a": {}, "b": {}, "g": { "terminal": "goal" } },
  "transitions": [
    { "from": "a", "action": "go", "to": "b", "reward": 1 },
    { "from": "a", "action": "stay", "to": "a", "reward": 0 },
    { "from": "b", "action": ["go", "stay"], "to": "g", "reward": 10 }
  ]
}
`;

/** A planted bug: the outcomes of b --go add up to 0.9. */
const LEAKY = CHAIN.replace(
  '{ "from": "b", "action": ["go", "stay"], "to": "g", "reward": 10 }',
  '{ "from": "b", "action": ["go", "stay"], "to": { "g": 0.5, "a": 0.4 }, "reward": 10 }',
);

let folder: string;

beforeAll(() => {
  ensureBuilt();
  folder = mkdtempSync(join(tmpdir(), 'episcope-lsp-'));
});

afterAll(() => {
  rmSync(folder, { recursive: true, force: true });
});

function writeSpec(relative: string, text: string): string {
  const path = join(folder, relative);
  mkdirSync(join(path, '..'), { recursive: true });
  writeFileSync(path, text);
  return pathUri(path);
}

function byRule(diagnostics: Diagnostic[], rule: string): Diagnostic[] {
  return diagnostics.filter((d) => d.code === rule);
}

/** Sends a code action's edits for `uri` as one didChange (in descending order, so each range is still valid). */
async function applyToDocument(
  client: TestClient,
  uri: string,
  text: string,
  edits: LspTextEdit[],
  version: number,
): Promise<string> {
  const sorted = [...edits].sort(
    (a, b) => b.range.start.line - a.range.start.line || b.range.start.character - a.range.start.character,
  );
  await client.change(
    uri,
    version,
    sorted.map((e) => ({ range: e.range, text: e.newText })),
  );
  return applyTextEdits(text, edits);
}

interface CodeActionLike {
  title: string;
  kind?: string;
  edit?: {
    documentChanges?: Array<{
      kind?: string;
      uri?: string;
      textDocument?: { uri: string; version: number | null };
      edits?: LspTextEdit[];
    }>;
  };
  command?: { command: string; arguments?: unknown[] };
}

describe('a push client (no pull diagnostics)', () => {
  let client: TestClient;

  beforeAll(async () => {
    client = new TestClient({ pull: false, workspaceFolder: folder });
  });

  afterAll(async () => {
    await client.stop();
  });

  it('initializes with hover, code lens, code actions and commands, and without a pull provider', async () => {
    const result = await client.initialize();
    expect(result.serverInfo?.name).toBe('episcope');
    expect(result.capabilities.hoverProvider).toBe(true);
    expect(result.capabilities.codeLensProvider).toBeDefined();
    expect(result.capabilities.codeActionProvider).toEqual({ codeActionKinds: ['quickfix'] });
    expect(result.capabilities.executeCommandProvider?.commands).toContain('episcope.server.showRuleDocumentation');
    expect(result.capabilities.diagnosticProvider).toBeUndefined();
  });

  it('gives edits inside one value the diagnostics and hovers of a fresh open of the edited text', async () => {
    // Each edit changes one number, so the worker re-reads it from its last read (load/json-reread.ts);
    // the first edit makes the text longer, so every later position moves.
    const uri = writeSpec('edited.mdp.json', LEAKY);
    await client.open(uri, LEAKY);
    await client.pushed(uri, 1);
    const steps = [
      { before: '"to": "b", "reward": 1 }', after: '"to": "b", "reward": 12.5 }' },
      { before: '"a": 0.4 }', after: '"a": 0.5 }' },
    ];
    let text = LEAKY;
    for (const [index, step] of steps.entries()) {
      const offset = text.indexOf(step.before);
      const start = positionOf(text, step.before, 0, 0);
      const end = positionOf(text, step.before, 0, step.before.length);
      await client.change(uri, index + 2, [{ range: { start, end }, text: step.after }]);
      text = text.slice(0, offset) + step.after + text.slice(offset + step.before.length);
      const edited = await client.pushed(uri, index + 2);
      const freshUri = writeSpec(`fresh-${index}.mdp.json`, text);
      await client.open(freshUri, text);
      const fresh = await client.pushed(freshUri, 1);
      // The diagnostics' data names the document version they belong to; all else must agree.
      const unversioned = (list: Diagnostic[]) =>
        list.map((d) => ({ ...d, data: { ...(d.data as object), version: undefined } }));
      expect(unversioned(edited.diagnostics)).toEqual(unversioned(fresh.diagnostics));
      expect(edited.diagnostics.length).toBe(index === 0 ? 1 : 0);
    }
    // Once b's outcomes add up to 1 the spec compiles. By hand: V*(b) = 10 + 0.9 (0.5 V*(a)) and
    // V*(a) = 12.5 + 0.9 V*(b) (going beats staying), so V*(a) = 21.5 / 0.595 = 36.13.
    const at = positionOf(text, '"a": {}');
    const freshUri = writeSpec('fresh-final.mdp.json', text);
    await client.open(freshUri, text);
    await client.pushed(freshUri, 1);
    const [editedHover, freshHover] = await Promise.all([client.hover(uri, at), client.hover(freshUri, at)]);
    expect(editedHover!.contents).toEqual(freshHover!.contents);
    expect(editedHover!.contents.value).toContain('| optimal | 36.13 |');
    expect(byRule((await client.pushed(uri, 3)).diagnostics, 'probability-sum')).toEqual([]);
  });

  it('pushes diagnostics with the rule id, source, a documentation link and the version', async () => {
    const uri = writeSpec('leaky.mdp.json', LEAKY);
    await client.open(uri, LEAKY);
    const pushed = await client.pushed(uri, 1);
    const [finding] = byRule(pushed.diagnostics, 'probability-sum');
    expect(finding).toBeDefined();
    expect(finding.source).toBe('episcope');
    expect(finding.severity).toBe(1);
    // The range is the `to` of b's transition.
    expect(finding.range.start).toEqual(positionOf(LEAKY, '{ "g": 0.5', 0, 0));
    const doc = fileURLToPath(finding.codeDescription!.href);
    expect(doc.endsWith(join('docs', 'rules', 'probability-sum.md'))).toBe(true);
    expect(readFileSync(doc, 'utf8')).toContain('# probability-sum');
  });

  it('offers the rule’s fix as a quick fix; applying it clears the finding', async () => {
    const uri = pathUri(join(folder, 'leaky.mdp.json'));
    const finding = byRule((await client.pushed(uri, 1)).diagnostics, 'probability-sum')[0];
    const actions = await client.connection.sendRequest<CodeActionLike[]>('textDocument/codeAction', {
      textDocument: { uri },
      range: finding.range,
      context: { diagnostics: [finding], only: ['quickfix'] },
    });
    const normalise = actions.find((a) => a.title.startsWith('Normalise'));
    expect(normalise, actions.map((a) => a.title).join('; ')).toBeDefined();
    const change = normalise!.edit!.documentChanges![0];
    expect(change.textDocument).toEqual({ uri, version: 1 });
    const mark = client.mark();
    const fixed = await applyToDocument(client, uri, LEAKY, change.edits!, 2);
    // Divided by their sum 0.9: 0.5/0.9 and 0.4/0.9.
    expect(fixed).toMatch(/"g": 0\.5555555555\d*, "a": 0\.4444444444\d*/);
    const after = await client.pushed(uri, 2, mark);
    expect(byRule(after.diagnostics, 'probability-sum')).toEqual([]);
    // The other actions: documentation and the two ways to ignore the rule.
    expect(actions.map((a) => a.title)).toEqual(
      expect.arrayContaining([
        'Show the documentation of rule probability-sum',
        expect.stringMatching(/^Ignore probability-sum on this line/),
        expect.stringMatching(/^Ignore probability-sum in leaky\.mdp\.json \(create episcope\.config\.json/),
      ]),
    );
  });

  it('hovers a state with its optimal, worst and random values and Q* per action (values by hand)', async () => {
    const uri = writeSpec('chain.mdp.json', CHAIN);
    await client.open(uri, CHAIN);
    await client.pushed(uri, 1);
    const declaration = await client.hover(uri, positionOf(CHAIN, '"a": {}'));
    const text = declaration!.contents.value;
    expect(text).toContain('**`a`**');
    expect(text).toMatch(/\| optimal \| 10 \| 100% \| 0% \| 0% \| 0% \|/);
    expect(text).toMatch(/\| worst \| 0 \|/);
    // 5 / 0.55 = 9.0909..., shown with four significant digits; the goal is reached with probability 1.
    expect(text).toMatch(/\| random \| 9\.091 \| 100% \| 0% \| 0% \| 0% \|/);
    expect(text).toContain('Best action: `go`');
    expect(text).toContain('`stay` 9');
    // A reference in `from` names the same state.
    const reference = await client.hover(uri, positionOf(CHAIN, '"from": "a"', 0, 10));
    expect(reference!.contents.value).toBe(text);
    // b: both actions enter the goal paying 10.
    const b = await client.hover(uri, positionOf(CHAIN, '"to": "b"', 0, 7));
    expect(b!.contents.value).toMatch(/\| optimal \| 10 \|/);
  });

  it('hovers a transition with its Q* and the gap to the best action, and discount with the effective horizon', async () => {
    const uri = pathUri(join(folder, 'chain.mdp.json'));
    const stay = await client.hover(uri, positionOf(CHAIN, '"action": "stay", "to": "a"', 0, 2));
    expect(stay!.contents.value).toBe('`a` → `stay`: Q* 9, 1 below the best action (`go`, 10)');
    const discount = await client.hover(uri, positionOf(CHAIN, '"discount"'));
    // 1 / (1 - 0.9) = 10 steps; the goal is two steps away and pays 10, worth 10 * 0.9 = 9 from the start.
    expect(discount!.contents.value).toContain('effective horizon 1/(1 - 0.9) = 10 steps');
    expect(discount!.contents.value).toContain('entering it pays 10, worth 9 seen from the start');
  });

  it('shows a code lens above the spec with the start’s return ranges and goal reach', async () => {
    const uri = pathUri(join(folder, 'chain.mdp.json'));
    const lenses = await client.connection.sendRequest<
      Array<{ range: { start: { line: number } }; command: { title: string } }>
    >('textDocument/codeLens', {
      textDocument: { uri },
    });
    expect(lenses.map((l) => l.command.title)).toEqual([
      'Return from the start: optimal 10 · random 9.091 · worst 0',
      'Goal reach: optimal 100% · random 100% · best possible 100%',
    ]);
    expect(lenses[0].range.start.line).toBe(0);
  });

  it('gives related locations for a loop finding', async () => {
    const text = readFileSync(join(ROOT, 'examples', 'cleaning-robot-dock.mdp.json'), 'utf8');
    const uri = writeSpec('dock.mdp.json', text);
    await client.open(uri, text);
    const [loop] = byRule((await client.pushed(uri, 1)).diagnostics, 'reward-loop');
    expect(loop.relatedInformation?.length).toBeGreaterThan(0);
    expect(loop.relatedInformation!.every((r) => r.location.uri === uri)).toBe(true);
    expect(loop.relatedInformation!.map((r) => r.message)).toEqual(
      expect.arrayContaining([expect.stringContaining('hall --dock--> dock')]),
    );
  });

  it('ignores a rule through episcope.config.json once a reason is written', async () => {
    const uri = writeSpec('specs/ignored.mdp.json', LEAKY);
    await client.open(uri, LEAKY);
    const finding = byRule((await client.pushed(uri, 1)).diagnostics, 'probability-sum')[0];
    const actions = await client.connection.sendRequest<CodeActionLike[]>('textDocument/codeAction', {
      textDocument: { uri },
      range: finding.range,
      context: { diagnostics: [finding] },
    });
    const ignore = actions.find((a) => a.title.startsWith('Ignore probability-sum in specs/ignored.mdp.json'));
    expect(ignore, actions.map((a) => a.title).join('; ')).toBeDefined();
    const [create, insert] = ignore!.edit!.documentChanges!;
    const configPath = join(folder, 'episcope.config.json');
    expect(create).toEqual({ kind: 'create', uri: pathUri(configPath), options: { ignoreIfExists: true } });
    const written = applyTextEdits('', insert.edits!);
    expect(JSON.parse(written)).toEqual({
      ignore: [{ rule: 'probability-sum', path: 'specs/ignored.mdp.json', reason: '' }],
    });

    // The command after the edit puts the cursor inside the empty reason.
    await client.connection.sendRequest('workspace/executeCommand', {
      command: ignore!.command!.command,
      arguments: ignore!.command!.arguments,
    });
    const shown = client.shownDocuments.at(-1) as {
      uri: string;
      selection: { start: { line: number; character: number } };
    };
    expect(shown.uri).toBe(pathUri(configPath));
    expect(
      written
        .split('\n')
        [shown.selection.start.line].slice(shown.selection.start.character - 1, shown.selection.start.character + 1),
    ).toBe('""');

    // Without a reason the entry does not apply (the config file gets a finding saying so).
    writeFileSync(configPath, written);
    let mark = client.mark();
    await client.connection.sendNotification('workspace/didChangeWatchedFiles', {
      changes: [{ uri: pathUri(configPath), type: 1 }],
    });
    const configProblems = await client.pushed(pathUri(configPath), undefined, mark);
    expect(configProblems.diagnostics.map((d) => d.message).join('\n')).toMatch(/reason/);
    expect(byRule((await client.pushed(uri, 1, mark)).diagnostics, 'probability-sum')).toHaveLength(1);

    mark = client.mark();
    writeFileSync(
      configPath,
      written.replace('"reason": ""', '"reason": "the missing 0.1 is modelled elsewhere (test)"'),
    );
    await client.connection.sendNotification('workspace/didChangeWatchedFiles', {
      changes: [{ uri: pathUri(configPath), type: 2 }],
    });
    const after = await client.pushed(uri, 1, mark);
    expect(byRule(after.diagnostics, 'probability-sum')).toEqual([]);
    rmSync(configPath);
    await client.connection.sendNotification('workspace/didChangeWatchedFiles', {
      changes: [{ uri: pathUri(configPath), type: 3 }],
    });
  });

  it('ignores a rule on one line with an episcope-ignore comment', async () => {
    const uri = writeSpec('commented.mdp.json', LEAKY);
    await client.open(uri, LEAKY);
    const finding = byRule((await client.pushed(uri, 1)).diagnostics, 'probability-sum')[0];
    const actions = await client.connection.sendRequest<CodeActionLike[]>('textDocument/codeAction', {
      textDocument: { uri },
      range: finding.range,
      context: { diagnostics: [finding] },
    });
    const comment = actions.find((a) => a.title.startsWith('Ignore probability-sum on this line'))!;
    const edits = comment.edit!.documentChanges![0].edits!;
    const commented = applyTextEdits(LEAKY, edits);
    expect(commented).toContain('    // episcope-ignore probability-sum: \n    { "from": "b"');
    const withReason = commented.replace('probability-sum: ', 'probability-sum: modelled elsewhere (test)');
    const mark = client.mark();
    await client.replace(uri, LEAKY, withReason, 2);
    expect(byRule((await client.pushed(uri, 2, mark)).diagnostics, 'probability-sum')).toEqual([]);
  });

  it('re-analyses when a setting changes (a rule turned off in the editor)', async () => {
    const uri = pathUri(join(folder, 'dock.mdp.json'));
    client.settings = { rules: { 'reward-loop': 'off' } };
    const mark = client.mark();
    await client.connection.sendNotification('workspace/didChangeConfiguration', { settings: null });
    const after = await client.pushed(uri, 1, mark);
    expect(byRule(after.diagnostics, 'reward-loop')).toEqual([]);
    client.settings = {};
    await client.connection.sendNotification('workspace/didChangeConfiguration', { settings: null });
  });

  it('answers a malformed request with an error or nothing, and keeps serving', async () => {
    const uri = pathUri(join(folder, 'chain.mdp.json'));
    const bad = await client.connection
      .sendRequest('textDocument/hover', { textDocument: { uri } })
      .catch((e: Error) => e);
    expect(bad === null || bad instanceof Error).toBe(true);
    const unknown = await client.hover('file:///nowhere/none.mdp.json', { line: 0, character: 0 });
    expect(unknown).toBeNull();
    const good = await client.hover(uri, positionOf(CHAIN, '"b": {}'));
    expect(good!.contents.value).toContain('**`b`**');
  });

  it('shuts down and exits with code 0', async () => {
    expect(await client.stop()).toBe(0);
  });
});

describe('a pull client', () => {
  let client: TestClient;

  beforeAll(async () => {
    client = new TestClient({ pull: true, workspaceFolder: folder });
  });

  afterAll(async () => {
    await client.stop();
  });

  it('registers a diagnostic provider and answers textDocument/diagnostic, unchanged until an edit', async () => {
    const result = await client.initialize();
    expect(result.capabilities.diagnosticProvider).toEqual({
      identifier: 'episcope',
      interFileDependencies: false,
      workspaceDiagnostics: false,
    });
    const uri = writeSpec('pulled.mdp.json', LEAKY);
    await client.open(uri, LEAKY);
    type Report = { kind: 'full' | 'unchanged'; resultId?: string; items?: Diagnostic[] };
    const first = await client.connection.sendRequest<Report>('textDocument/diagnostic', { textDocument: { uri } });
    expect(first.kind).toBe('full');
    expect(byRule(first.items!, 'probability-sum')).toHaveLength(1);
    const again = await client.connection.sendRequest<Report>('textDocument/diagnostic', {
      textDocument: { uri },
      previousResultId: first.resultId,
    });
    expect(again).toEqual({ kind: 'unchanged', resultId: first.resultId });
    await client.replace(uri, LEAKY, CHAIN, 2);
    const fresh = await client.connection.sendRequest<Report>('textDocument/diagnostic', {
      textDocument: { uri },
      previousResultId: first.resultId,
    });
    expect(fresh.kind).toBe('full');
    expect(fresh.items).toEqual([]);
    // Nothing is pushed to a pull client for an open spec.
    expect(client.diagnostics.filter((d) => d.uri === uri)).toEqual([]);
  });
});

describe('responsiveness and stale work', () => {
  let client: TestClient;
  // Analysing 100k states takes a minute or more, so the edit below always lands while it runs.
  const big = warehouseSpecText(100_000);

  beforeAll(async () => {
    client = new TestClient({ pull: false, workspaceFolder: folder });
    await client.initialize();
  });

  afterAll(async () => {
    await client.stop();
  });

  it('answers hovers while a large spec is analysed, reports progress, and drops the stale analysis on edit', async () => {
    const small = writeSpec('small.mdp.json', CHAIN);
    await client.open(small, CHAIN);
    await client.pushed(small, 1);

    const large = pathUri(join(folder, 'large.mdp.json'));
    await client.open(large, big);
    await client.waitFor(
      () => client.statuses.find((s) => s.uri === large && s.state === 'analysing'),
      'the large analysis to start',
    );
    const hover = await client.hover(small, positionOf(CHAIN, '"a": {}'));
    expect(hover!.contents.value).toContain('| optimal | 10 |');
    // The hover was answered while the large spec was still being analysed.
    expect(client.statuses.some((s) => s.uri === large && s.state === 'done')).toBe(false);

    await client.waitFor(() => client.progressTokens.length > 0, 'work-done progress for the long analysis');
    await client.replace(large, big, CHAIN, 2);
    const fresh = await client.pushed(large, 2);
    expect(fresh.diagnostics).toEqual([]);
    // The analysis of version 1 was cancelled: its diagnostics were never published.
    expect(client.diagnostics.filter((d) => d.uri === large && d.version === 1)).toEqual([]);
  });

  it('answers a hover from the previous analysis while the edited text is analysed, mapping positions through the edit', async () => {
    const medium = warehouseSpecText(3000);
    const uri = pathUri(join(folder, 'medium.mdp.json'));
    await client.open(uri, medium);
    await client.pushed(uri, 1);
    // Insert a line above the states, so every later position moves down one line.
    const at = positionOf(medium, '  "states"', 0, 0);
    await client.change(uri, 2, [{ range: { start: at, end: at }, text: '  "objective": "maximize",\n' }]);
    const edited = medium.replace('  "states"', '  "objective": "maximize",\n  "states"');
    const hover = await client.hover(uri, positionOf(edited, '"b5":'));
    expect(hover!.contents.value).toContain('**`b5`**');
    expect(hover!.contents.value).toContain('From the analysis of an earlier version');
    expect(hover!.range).toEqual({ start: positionOf(edited, '"b5"', 0, 0), end: positionOf(edited, '"b5"', 0, 4) });
    await client.pushed(uri, 2);
  });
});

describe('commands', () => {
  it('analyses every spec of the workspace, pushing diagnostics for files that are not open', async () => {
    const workspace = mkdtempSync(join(tmpdir(), 'episcope-workspace-'));
    try {
      mkdirSync(join(workspace, 'specs'));
      mkdirSync(join(workspace, 'node_modules', 'pkg'), { recursive: true });
      writeFileSync(join(workspace, 'specs', 'leaky.mdp.json'), LEAKY);
      writeFileSync(join(workspace, 'chain.mdp.json'), CHAIN);
      writeFileSync(join(workspace, 'node_modules', 'pkg', 'skipped.mdp.json'), LEAKY);
      const client = new TestClient({ pull: true, workspaceFolder: workspace });
      await client.initialize();
      const open = pathUri(join(workspace, 'chain.mdp.json'));
      await client.open(open, CHAIN);
      const summary = await client.connection.sendRequest('workspace/executeCommand', {
        command: 'episcope.server.analyzeWorkspace',
        arguments: [],
      });
      expect(summary).toEqual({ files: 2, errors: 1, warnings: 0, infos: 0, failed: 0 });
      const closed = pathUri(join(workspace, 'specs', 'leaky.mdp.json'));
      expect(byRule((await client.pushed(closed)).diagnostics, 'probability-sum')).toHaveLength(1);
      // The open file answers pulls; nothing was pushed for it or for node_modules.
      expect(client.diagnostics.map((d) => d.uri)).toEqual([closed]);
      expect(await client.stop()).toBe(0);
    } finally {
      rmSync(workspace, { recursive: true, force: true });
    }
  });

  it('shows a rule’s documentation page', async () => {
    const client = new TestClient({ pull: false });
    await client.initialize();
    const shown = await client.connection.sendRequest('workspace/executeCommand', {
      command: 'episcope.server.showRuleDocumentation',
      arguments: ['reward-loop'],
    });
    expect(shown).toBe(true);
    const { uri } = client.shownDocuments.at(-1) as { uri: string };
    expect(readFileSync(fileURLToPath(uri), 'utf8')).toMatch(/^# reward-loop\n/);
    expect(await client.stop()).toBe(0);
  });
});

describe('episcope server --stdio and workspace trust', () => {
  it('serves the same diagnostics through the command line entry', async () => {
    const client = new TestClient({ pull: false, viaCli: true });
    await client.initialize();
    const uri = writeSpec('cli.mdp.json', LEAKY);
    await client.open(uri, LEAKY);
    expect(byRule((await client.pushed(uri, 1)).diagnostics, 'probability-sum')).toHaveLength(1);
    expect(await client.stop()).toBe(0);
  });

  it('runs TypeScript model code only once the workspace is trusted', async () => {
    const model = [
      "import { defineMdp } from 'episcope';",
      '// A coin-operated lamp (a scenario of our own): press to light it, then it goes out.',
      'export default defineMdp({',
      '  discount: 0.5,',
      "  start: 'dark',",
      "  actions: (s: string) => ['press'],",
      "  outcomes: (s: string, a: string) => (s === 'dark' ? [{ state: 'lit', probability: 1, reward: 2 }] : [{ state: 'done', probability: 1, reward: 0 }]),",
      "  terminal: (s: string) => (s === 'done' ? 'goal' : undefined),",
      '});',
      '',
    ].join('\n');
    const uri = writeSpec('lamp.mdp.ts', model);
    const client = new TestClient({ pull: false, workspaceFolder: folder, initializationOptions: { trusted: false } });
    await client.initialize();
    await client.open(uri, model);
    await client.pushed(uri, 1);
    type Lens = { command: { title: string } };
    const untrusted = await client.connection.sendRequest<Lens[]>('textDocument/codeLens', { textDocument: { uri } });
    expect(untrusted.map((l) => l.command.title).join('\n')).toMatch(/model code was not run/);
    const mark = client.statuses.length;
    await client.connection.sendNotification('episcope/trust', { trusted: true });
    await client.analysed(uri, mark);
    const trusted = await client.connection.sendRequest<Lens[]>('textDocument/codeLens', { textDocument: { uri } });
    // dark --press--> lit pays 2, lit --press--> done pays 0: the start is worth 2.
    expect(trusted[0].command.title).toBe('Return from the start: optimal 2 · random 2 · worst 2');
    expect(await client.stop()).toBe(0);
    expect(existsSync(join(folder, 'episcope.config.json'))).toBe(false);

    // `episcope server --no-exec` never runs model code, whatever the client says.
    const noExec = new TestClient({
      pull: false,
      workspaceFolder: folder,
      viaCli: true,
      extraArgs: ['--no-exec'],
      initializationOptions: { trusted: true },
    });
    await noExec.initialize();
    await noExec.open(uri, model);
    await noExec.pushed(uri, 1);
    const lenses = await noExec.connection.sendRequest<Lens[]>('textDocument/codeLens', { textDocument: { uri } });
    expect(lenses.map((l) => l.command.title).join('\n')).toMatch(/model code was not run/);
    expect(await noExec.stop()).toBe(0);
  });
});
