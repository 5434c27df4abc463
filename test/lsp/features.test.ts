/**
 * The language server's features in-process, as tables: hover text at a position, the code
 * actions offered for a diagnostic (and that applying a rule's fix leaves a spec on which the rule
 * no longer fires), and the snapshot's lens and diagnostics. The stdio tests in server.test.ts keep
 * the protocol; these check what the features answer.
 *
 * Expected values are derived by hand from the Bellman equations (closed forms noted per case).
 */
import { TextDocument } from 'vscode-languageserver-textdocument';
import type { CodeAction, TextEdit } from 'vscode-languageserver-protocol';
import { describe, expect, it } from 'vitest';
import { analyzeJsonText } from '../../server/src/analyze';
import { codeActions } from '../../server/src/lsp/code-actions';
import { hoverAt } from '../../server/src/lsp/hover';
import { buildSnapshot } from '../../server/src/lsp/snapshot';
import type { AnalysisSnapshot } from '../../server/src/lsp/protocol';
import { analyzeTs } from '../typescript/ts-specs';

const PATH = '/work/specs/feature.mdp.json';
const URI = 'file:///work/specs/feature.mdp.json';

function snapshotOf(text: string): AnalysisSnapshot {
  const report = analyzeJsonText(PATH, text, { analysis: true });
  return buildSnapshot({ uri: URI, version: 1, report, durationMs: 1 });
}

const spec = (value: unknown) => JSON.stringify(value, null, 2);

/**
 * a -go-> b -go-> g (pays 1), and `wait` stays put, discount 0.9. Optimal: V(b) = 1, V(a) = 0.9.
 * Random (each action 1/2): V(b) = 1/2 + 0.45 V(b), so V(b) = 1/1.1 = 0.9091;
 * V(a) = 0.45 V(b) + 0.45 V(a), so V(a) = 0.45 * 0.9091 / 0.55 = 0.7438. Q*(b, wait) = 0.9 V(b) = 0.9.
 * Expected steps from b: 1 optimal, 2 random (geometric with success 1/2).
 */
const chain = spec({
  discount: 0.9,
  start: 'a',
  actions: ['go', 'wait'],
  states: { a: {}, b: {}, g: { terminal: 'goal' } },
  transitions: [
    { from: 'a', action: 'go', to: 'b', reward: 0 },
    { from: 'a', action: 'wait', to: 'a', reward: 0 },
    { from: 'b', action: 'go', to: 'g', reward: 1 },
    { from: 'b', action: 'wait', to: 'b', reward: 0 },
  ],
});

/** Minimize a cost of 2 per step on a two-step route, horizon 5: V*(a) = 4 with 5 steps left. */
const route = spec({
  objective: 'minimize',
  discount: 1,
  horizon: 5,
  start: 'a',
  actions: ['go'],
  states: { a: {}, b: {}, g: { terminal: 'goal' } },
  transitions: [
    { from: 'a', action: 'go', to: 'b', reward: 2 },
    { from: 'b', action: 'go', to: 'g', reward: 2 },
  ],
});

interface HoverCase {
  name: string;
  text: string;
  /** The hovered offset, found in the text. */
  at: (text: string) => number;
  shows: RegExp[];
  hides?: RegExp[];
}

const HOVERS: HoverCase[] = [
  {
    name: 'a state declaration: values under each policy, Q* per action, best action, lengths',
    text: chain,
    at: (t) => t.indexOf('"b": {}') + 1,
    shows: [
      /\| optimal \| 1 \| 100% /,
      /\| random \| 0\.9091 \|/,
      /\| worst \| 0 \|/,
      /Best action: `go`/,
      /`go` 1 ✓ · `wait` 0\.9/,
      /optimal 1, random 2/,
    ],
  },
  {
    name: 'a state named as a target: the same state',
    text: chain,
    at: (t) => t.indexOf('"to": "b"') + '"to": "'.length,
    shows: [/\*\*`b`\*\*/, /\| random \| 0\.9091 \|/],
  },
  {
    name: 'a terminal: ends the episode, value 0',
    text: chain,
    at: (t) => t.indexOf('"g": {') + 1,
    shows: [/terminal \(goal\)/, /its value is 0/],
  },
  {
    name: 'a transition: its Q* and whether it is best',
    text: chain,
    at: (t) => t.indexOf('"from": "a"'),
    shows: [/`a` → `go`: Q\* 0\.9, the best action here/],
  },
  {
    name: 'a transition that is not best: the gap to the best action (V*(b) - Q*(b, wait) = 0.1)',
    text: chain,
    at: (t) => t.indexOf('"from": "b",\n      "action": "wait"'),
    shows: [/`b` → `wait`: Q\* 0\.9, 0\.1 below the best action \(`go`, 1\)/],
  },
  {
    name: 'the discount: effective horizon 1/(1 - 0.9) = 10 and the goal seen from the start',
    text: chain,
    at: (t) => t.indexOf('"discount"') + 2,
    shows: [/effective horizon 1\/\(1 - 0\.9\) = 10 steps/, /Optimal return from the start: 0\.9\./],
  },
  {
    name: 'a state of a horizon spec: values with the steps left, minimize',
    text: route,
    at: (t) => t.indexOf('"a": {}') + 1,
    shows: [/with 5 steps left/, /\| optimal \| 4 \|/],
    hides: [/NaN|undefined/],
  },
];

describe('hover (in-process)', () => {
  for (const c of HOVERS) {
    it(c.name, () => {
      const snapshot = snapshotOf(c.text);
      const offset = c.at(c.text);
      expect(offset).toBeGreaterThanOrEqual(0);
      const answer = hoverAt(snapshot, offset);
      expect(answer, 'no hover at the offset').toBeDefined();
      expect(answer!.start).toBeLessThanOrEqual(offset);
      expect(answer!.end).toBeGreaterThan(offset);
      for (const pattern of c.shows) expect(answer!.markdown).toMatch(pattern);
      for (const pattern of [/NaN|undefined/, ...(c.hides ?? [])]) expect(answer!.markdown).not.toMatch(pattern);
    });
  }

  it('answers nothing between tokens, nor on a spec that does not compile (its diagnostics say why)', () => {
    const snapshot = snapshotOf(chain);
    expect(hoverAt(snapshot, 0)).toBeUndefined();
    // An undeclared target stops compilation: no hover shows a value the analysis did not compute.
    const broken = chain.replace('"to": "g"', '"to": "nowhere"');
    const brokenSnapshot = snapshotOf(broken);
    expect(hoverAt(brokenSnapshot, broken.indexOf('"b": {}') + 1)).toBeUndefined();
    expect(brokenSnapshot.notAnalysed).toBeTruthy();
    expect(brokenSnapshot.diagnostics.map((d) => d.code)).toContain('undeclared-state');
  });
});

interface FixCase {
  name: string;
  text: string;
  rule: string;
  /** The title of the fix to apply. */
  fix: RegExp;
}

const FIXES: FixCase[] = [
  {
    name: 'probabilities that add up to 0.9 are normalised',
    text: spec({
      discount: 0.9,
      start: 'a',
      actions: ['go'],
      states: { a: {}, g: { terminal: 'goal' } },
      transitions: [{ from: 'a', action: 'go', to: { g: 0.5, a: 0.4 }, reward: 1 }],
    }),
    rule: 'probability-sum',
    fix: /^Normalise the probabilities/,
  },
  {
    name: 'a misspelt target is changed to the declared state',
    text: spec({
      discount: 0.9,
      start: 'a',
      actions: ['go'],
      states: { a: {}, goal: { terminal: 'goal' } },
      transitions: [{ from: 'a', action: 'go', to: 'gaol', reward: 1 }],
    }),
    rule: 'undeclared-state',
    fix: /^Change to 'goal'/,
  },
  {
    name: 'a horizon shorter than the route to the goal is raised',
    text: spec({
      discount: 1,
      horizon: 1,
      start: 'a',
      actions: ['go'],
      states: { a: {}, b: {}, g: { terminal: 'goal' } },
      transitions: [
        { from: 'a', action: 'go', to: 'b', reward: 0 },
        { from: 'b', action: 'go', to: 'g', reward: 1 },
      ],
    }),
    rule: 'horizon-too-short',
    fix: /^Raise the horizon to 2/,
  },
  {
    name: 'a potential on a terminal is set to 0',
    text: spec({
      discount: 0.9,
      start: 'a',
      actions: ['go'],
      states: { a: {}, g: { terminal: 'goal' } },
      shaping: { potential: { a: 0, g: 3 } },
      transitions: [{ from: 'a', action: 'go', to: 'g', reward: 1 }],
    }),
    rule: 'terminal-potential',
    fix: /^Set the potential of 'g' to 0/,
  },
];

function actionsFor(
  text: string,
  rule: string,
  documentChanges = false,
): { actions: CodeAction[]; document: TextDocument } {
  const snapshot = snapshotOf(text);
  const document = TextDocument.create(URI, 'json', 1, text);
  const diagnostics = snapshot.diagnostics.filter((d) => d.code === rule);
  expect(diagnostics.length, `${rule} should fire`).toBeGreaterThan(0);
  const actions = codeActions({
    document,
    path: PATH,
    diagnostics,
    mapOffset: (offset) => offset,
    newConfigFolder: '/work',
    documentChanges,
    createFiles: true,
    commands: true,
  });
  return { actions, document };
}

function applied(document: TextDocument, action: CodeAction): string {
  const inPlace = action.edit?.changes?.[URI];
  const versioned = action.edit?.documentChanges?.flatMap((change) =>
    'textDocument' in change && change.textDocument.uri === URI ? change.edits : [],
  );
  const edits = (inPlace ?? versioned ?? []) as TextEdit[];
  expect(edits.length, `${action.title} edits the spec`).toBeGreaterThan(0);
  return TextDocument.applyEdits(document, edits);
}

describe('code actions (in-process)', () => {
  for (const c of FIXES) {
    it(`${c.rule}: ${c.name}, and the fixed text is clean of the rule`, () => {
      const { actions, document } = actionsFor(c.text, c.rule);
      const fix = actions.find((a) => c.fix.test(a.title));
      expect(fix, `offered: ${actions.map((a) => a.title).join(' | ')}`).toBeDefined();
      expect(fix!.isPreferred).toBe(true);
      const fixed = applied(document, fix!);
      const after = analyzeJsonText(PATH, fixed, { analysis: true });
      expect(after.findings.filter((f) => f.rule === c.rule)).toEqual([]);
      // The fix leaves valid JSON that loads without a schema or syntax error.
      expect(() => JSON.parse(fixed) as unknown).not.toThrow();
      expect(after.findings.filter((f) => f.rule === 'schema' || f.rule === 'syntax')).toEqual([]);
    });
  }

  it('offers an ignore comment, an ignore entry in a new config file and the rule documentation, once per rule', () => {
    const { actions, document } = actionsFor(FIXES[0].text, 'probability-sum', true);
    const titles = actions.map((a) => a.title);
    expect(titles.filter((t) => t.startsWith('Ignore probability-sum on this line'))).toHaveLength(1);
    expect(titles.filter((t) => t.startsWith('Show the documentation of rule probability-sum'))).toHaveLength(1);
    const entry = actions.find((a) =>
      a.edit?.documentChanges?.some((change) => 'kind' in change && change.kind === 'create'),
    );
    expect(entry, `offered: ${titles.join(' | ')}`).toBeDefined();
    expect(entry!.title).toBe(
      'Ignore probability-sum in specs/feature.mdp.json (create episcope.config.json; then write the reason)',
    );
    // The comment goes on its own line above the finding; the rule still fires until a reason is written.
    const comment = actions.find((a) => a.title.startsWith('Ignore probability-sum on this line'))!;
    const commented = applied(document, comment);
    expect(commented).toMatch(/\/\/ episcope-ignore probability-sum: \n/);
  });

  it('offers nothing for diagnostics of other tools', () => {
    const document = TextDocument.create(URI, 'json', 1, chain);
    const actions = codeActions({
      document,
      path: PATH,
      diagnostics: [
        {
          range: { start: { line: 0, character: 0 }, end: { line: 0, character: 1 } },
          message: 'x',
          source: 'json',
          code: 'probability-sum',
        },
      ],
      mapOffset: (offset) => offset,
      documentChanges: false,
      createFiles: false,
      commands: true,
    });
    expect(actions).toEqual([]);
  });
});

describe('snapshot (in-process)', () => {
  it('summarises the start in the lens with the hand-derived values', () => {
    const snapshot = snapshotOf(chain);
    expect(snapshot.lens).toEqual([
      'Return from the start: optimal 0.9 · random 0.7438 · worst 0',
      'Goal reach: optimal 100% · random 100% · best possible 100%',
    ]);
    expect(snapshot.diagnostics).toEqual([]);
    expect(snapshot.status).toMatch(/^3 states · 4 state-action pairs/);
  });

  it('places each diagnostic on the text it is about, with the rule, source and severity', () => {
    const text = FIXES[1].text;
    const snapshot = snapshotOf(text);
    const diagnostic = snapshot.diagnostics.find((d) => d.code === 'undeclared-state')!;
    expect(diagnostic.source).toBe('episcope');
    expect(diagnostic.severity).toBe(1);
    const document = TextDocument.create(URI, 'json', 1, text);
    expect(document.getText(diagnostic.range)).toBe('"gaol"');
    // No lens figures for a spec that does not compile; the reason is kept for hovers and the status.
    expect(snapshot.lens).toEqual([]);
    expect(snapshot.notAnalysed).toBeTruthy();
  });
});

describe('snapshot of a sampled model (in-process)', () => {
  // Each step pays 1 and ends the episode with probability 1/4: the return is geometric with mean 4.
  const geometric = `export default { name: 'coin', discount: 1, start: 0, actions: () => ['flip'],
  sample: (s, a, rng) => ({ state: s + 1, reward: 1, terminal: rng() < 0.25 ? 'goal' : undefined }) };`;

  it(
    'shows the estimates in the lens, labelled as sampled, with intervals and episodes',
    { timeout: 60_000 },
    async () => {
      const report = await analyzeTs(geometric, { rollouts: 1000 });
      const snapshot = buildSnapshot({ uri: 'file:///work/specs/coin.mdp.ts', version: 1, report, durationMs: 1 });
      expect(snapshot.lens[0]).toMatch(
        /^Estimated return from the start \(sampled\): random [\d.]+ \(95% [\d.]+ \.\. [\d.]+, 1,000 episodes\)/,
      );
      const [, lower, upper] = /random [\d.]+ \(95% ([\d.]+) \.\. ([\d.]+)/.exec(snapshot.lens[0])!;
      expect(Number(lower)).toBeLessThan(4);
      expect(Number(upper)).toBeGreaterThan(4);
      // Learning is on by default: its greedy policy and what it spent follow.
      expect(report.rollouts?.learning).toBeDefined();
      expect(snapshot.lens[0]).toContain('learned greedy');
      expect(snapshot.lens[1]).toMatch(/^Learning \(q-learning\): [\d,]+ steps? in [\d,]+ episodes? spent$/);
      for (const line of snapshot.lens) expect(line).not.toMatch(/NaN|undefined/);
    },
  );
});
