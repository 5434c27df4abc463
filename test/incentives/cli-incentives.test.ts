/**
 * The reward-incentive rules end to end through `episcope check`: the incentive examples in text and
 * JSON, and a folder of specs written here (each with one planted incentive bug of our own, invented
 * numbers) next to the classic textbook MDPs, which must stay quiet.
 */
import { copyFileSync, readdirSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import { describe, expect, it } from 'vitest';
import { cli, REPO_ROOT, tempFolder } from '../cli/cli-harness';

interface JsonFinding {
  rule: string;
  severity: string;
  message: string;
  line: number;
  column: number;
  trace?: Array<{ state: string; action?: string }>;
}
interface JsonOutput {
  files: Array<{ path: string; findings: JsonFinding[] }>;
}

const EXAMPLES: Record<string, string[]> = {
  'cleaning-robot-dock.mdp.json': ['reward-loop'],
  'loading-dock-edge.mdp.json': ['failure-preferred'],
  'greenhouse-vents.mdp.json': ['failure-preferred', 'objective-sign', 'term-direction'],
  'maze-runner-shaping.mdp.json': ['reward-loop', 'shaping-changes-policy', 'shaping-not-potential'],
  'parking-shaping-potential.mdp.json': ['shaping-changes-policy', 'terminal-potential'],
  'pipeline-crawler-discount.mdp.json': ['goal-discounted-away'],
  'kiosk-robot-shift.mdp.json': ['time-dependent-optimum'],
  'airport-shuttle-horizon.mdp.json': ['horizon-too-short'],
};

describe('episcope check on the incentive examples', () => {
  it('--format json reports exactly the planted rules, with positions and traces', async () => {
    const files = Object.keys(EXAMPLES).map((f) => path.join('examples', f));
    const result = await cli(['check', ...files, '--format', 'json']);
    expect(result.code).toBe(0);
    const output = JSON.parse(result.stdout) as JsonOutput;
    expect(output.files).toHaveLength(files.length);
    for (const file of output.files) {
      const expected = EXAMPLES[path.basename(file.path)];
      expect([...new Set(file.findings.map((f) => f.rule))].sort(), file.path).toEqual(expected);
      for (const finding of file.findings) {
        expect(finding.severity).toBe('warning');
        expect(finding.line).toBeGreaterThan(1);
        expect(finding.message.length).toBeGreaterThan(40);
      }
    }
    const loop = output.files.find((f) => f.path.endsWith('cleaning-robot-dock.mdp.json'))!.findings[0];
    expect(loop.trace?.map((t) => t.state)).toEqual(['living-room', 'kitchen', 'hall', 'dock', 'hall']);
    expect(loop.message).toContain('the loop earns 12.2 from the start');
  });

  it('text output prints each finding as file:line:col severity rule message', async () => {
    const result = await cli(['check', 'examples/loading-dock-edge.mdp.json', '--fail-on', 'warning']);
    expect(result.code).toBe(1);
    expect(result.stdout).toMatch(
      /^examples\/loading-dock-edge\.mdp\.json:\d+:\d+ warning failure-preferred the optimal policy ends in failure/m,
    );
    expect(result.stdout).toContain(
      'failing returns -3.0 from the start, while the most direct route to a goal returns -4.0',
    );
  });

  it('explain prints each incentive rule with its thresholds', async () => {
    for (const rule of [
      'reward-loop',
      'failure-preferred',
      'goal-discounted-away',
      'shaping-not-potential',
      'time-dependent-optimum',
    ]) {
      const result = await cli(['explain', rule]);
      expect(result.code).toBe(0);
      expect(result.stdout).toContain(rule);
      expect(result.stdout).toContain('When it fires');
    }
    expect((await cli(['explain', 'reward-loop'])).stdout).toContain('probabilityGap');
  });
});

/** Planted-bug specs that are not examples: one bug each, with the rule that must find it. */
const PLANTED: Array<[string, string, object]> = [
  [
    'arcade-coin-loop.mdp.json',
    'reward-loop',
    {
      discount: 0.99,
      start: 'lobby',
      actions: ['play', 'leave', 'return'],
      states: { lobby: { actions: ['play', 'leave'] }, machine: { actions: ['return'] }, street: { terminal: 'goal' } },
      transitions: [
        { from: 'lobby', action: 'play', to: 'machine', reward: 0.5 },
        { from: 'machine', action: 'return', to: 'lobby', reward: 0 },
        { from: 'lobby', action: 'leave', to: 'street', reward: 10 },
      ],
    },
  ],
  [
    'crane-drop.mdp.json',
    'failure-preferred',
    {
      discount: 0.99,
      start: 'hook',
      actions: ['lower', 'release'],
      states: {
        hook: {},
        mid: { actions: ['lower'] },
        low: { actions: ['lower'] },
        placed: { terminal: 'goal' },
        dropped: { terminal: 'failure' },
      },
      transitions: [
        { from: 'hook', action: 'lower', to: 'mid', reward: -2 },
        { from: 'mid', action: 'lower', to: 'low', reward: -2 },
        { from: 'low', action: 'lower', to: 'placed', reward: -2 },
        { from: 'hook', action: 'release', to: 'dropped', reward: -1 },
      ],
    },
  ],
  [
    'heater-alive-bonus.mdp.json',
    'living-reward',
    {
      discount: 0.98,
      start: 'cold',
      actions: ['heat', 'finish'],
      states: { cold: {}, warm: { actions: ['heat'] }, done: { terminal: 'goal' } },
      transitions: [
        { from: 'cold', action: 'heat', to: 'warm', reward: 0.5 },
        { from: 'warm', action: 'heat', to: 'cold', reward: 0.5 },
        { from: 'cold', action: 'finish', to: 'done', reward: 5 },
      ],
    },
  ],
  [
    'boat-sign.mdp.json',
    'objective-sign',
    {
      discount: 0.9,
      start: 'bay',
      actions: ['dock', 'drift'],
      states: { bay: {}, pier: { terminal: 'goal' }, rocks: { terminal: 'failure' } },
      transitions: [
        { from: 'bay', action: 'dock', to: 'pier', reward: 1 },
        { from: 'bay', action: 'drift', to: { rocks: 0.5, bay: 0.5 }, reward: 3 },
      ],
    },
  ],
  [
    'drone-penalty-sign.mdp.json',
    'term-direction',
    {
      discount: 0.9,
      start: 'pad',
      actions: ['fly'],
      rewardTerms: { wind: { direction: 'penalty' }, drop: { direction: 'bonus' } },
      states: { pad: {}, air: {}, target: { terminal: 'goal' } },
      transitions: [
        { from: 'pad', action: 'fly', to: 'air', reward: { wind: 0.3 } },
        { from: 'air', action: 'fly', to: 'target', reward: { drop: 4 } },
      ],
    },
  ],
  [
    'slalom-progress.mdp.json',
    'shaping-not-potential',
    {
      discount: 1,
      start: 'gate1',
      actions: ['next', 'retry', 'finish'],
      rewardTerms: { time: { direction: 'penalty' }, progress: { direction: 'either', shaping: true } },
      states: {
        gate1: { actions: ['next'] },
        gate2: { actions: ['next', 'retry'] },
        gate3: { actions: ['finish'] },
        end: { terminal: 'goal' },
      },
      transitions: [
        { from: 'gate1', action: 'next', to: 'gate2', reward: { time: -1, progress: 2 } },
        { from: 'gate2', action: 'retry', to: 'gate1', reward: { time: -1 } },
        { from: 'gate2', action: 'next', to: 'gate3', reward: { time: -1, progress: 2 } },
        { from: 'gate3', action: 'finish', to: 'end', reward: { time: -1, progress: 2 } },
      ],
    },
  ],
  [
    'forklift-terminal-potential.mdp.json',
    'terminal-potential',
    {
      discount: 0.95,
      start: 'aisle',
      actions: ['lift'],
      states: { aisle: {}, shelf: { terminal: 'goal' } },
      shaping: { potential: { aisle: 1, shelf: 1 } },
      transitions: [{ from: 'aisle', action: 'lift', to: 'shelf', reward: 2 }],
    },
  ],
  [
    'seed-drill-discount.mdp.json',
    'goal-discounted-away',
    {
      discount: 0.5,
      start: 'row0',
      actions: ['drill'],
      states: Object.fromEntries([
        ...Array.from({ length: 12 }, (_, i) => [`row${i}`, {}]),
        ['barn', { terminal: 'goal' }],
      ]),
      transitions: Array.from({ length: 12 }, (_, i) => ({
        from: `row${i}`,
        action: 'drill',
        to: i === 11 ? 'barn' : `row${i + 1}`,
        reward: i === 11 ? 30 : 0,
      })),
    },
  ],
  [
    'ferry-horizon.mdp.json',
    'horizon-too-short',
    {
      discount: 1,
      horizon: 2,
      start: 'quay',
      actions: ['sail'],
      states: { quay: {}, channel: {}, open: {}, island: { terminal: 'goal' } },
      transitions: [
        { from: 'quay', action: 'sail', to: 'channel', reward: -1 },
        { from: 'channel', action: 'sail', to: 'open', reward: -1 },
        { from: 'open', action: 'sail', to: 'island', reward: 10 },
      ],
    },
  ],
  [
    'vending-clock.mdp.json',
    'time-dependent-optimum',
    {
      discount: 1,
      horizon: 6,
      start: 'idle',
      actions: ['stock', 'sell'],
      states: { idle: {}, sold: { terminal: 'goal' } },
      transitions: [
        { from: 'idle', action: 'stock', to: 'idle', reward: 2 },
        { from: 'idle', action: 'sell', to: 'sold', reward: 3 },
      ],
    },
  ],
];

describe('episcope check on a folder of planted bugs and classic MDPs', () => {
  it('finds every planted bug and raises nothing at warning or above on the classic MDPs', async () => {
    const folder = tempFolder('incentives');
    for (const [file, , spec] of PLANTED)
      writeFileSync(path.join(folder, file), JSON.stringify({ name: file.replace('.mdp.json', ''), ...spec }, null, 2));
    const classic = path.join(REPO_ROOT, 'test', 'fixtures', 'classic');
    for (const file of readdirSync(classic).filter((f) => f.endsWith('.mdp.json')))
      copyFileSync(path.join(classic, file), path.join(folder, file));
    const result = await cli(['check', folder, '--format', 'json', '--fail-on', 'warning']);
    const output = JSON.parse(result.stdout) as JsonOutput;
    for (const [file, rule] of PLANTED) {
      const found = output.files.find((f) => path.basename(f.path) === file);
      expect(
        found?.findings.map((f) => f.rule),
        file,
      ).toContain(rule);
    }
    for (const file of output.files.filter((f) => !PLANTED.some(([name]) => name === path.basename(f.path)))) {
      expect(
        file.findings.filter((f) => f.severity !== 'info').map((f) => `${f.rule}: ${f.message}`),
        file.path,
      ).toEqual([]);
    }
    expect(result.code).toBe(1);
  });
});
