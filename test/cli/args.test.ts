import { describe, expect, it } from 'vitest';
import { OPTIONS, UsageError, parseArgs, usageText, type CommandSpec } from '../../server/src/cli/args';

const COMMANDS: CommandSpec[] = [
  {
    name: 'check',
    operands: '[paths...]',
    summary: 'check specs',
    options: ['format', 'values', 'fail-on'],
    minOperands: 0,
    maxOperands: Infinity,
  },
  { name: 'explain', operands: '[RULE]', summary: 'explain a rule', options: [], minOperands: 0, maxOperands: 1 },
];

function usageMessage(argv: string[]): string {
  try {
    parseArgs(argv, COMMANDS);
  } catch (error) {
    expect(error).toBeInstanceOf(UsageError);
    return (error as Error).message;
  }
  throw new Error(`expected a usage error for ${argv.join(' ')}`);
}

describe('argument parser', () => {
  it('reads the command, operands and defaults', () => {
    const parsed = parseArgs(['check', 'a', 'b'], COMMANDS);
    expect(parsed).toEqual({
      command: 'check',
      operands: ['a', 'b'],
      options: { format: 'text', values: false, 'fail-on': 'error' },
    });
  });

  it('takes --name value, --name=value and options before the command', () => {
    expect(parseArgs(['--format', 'json', 'check', 'x'], COMMANDS).options.format).toBe('json');
    expect(parseArgs(['check', '--fail-on=warning', 'x', '--values'], COMMANDS).options).toEqual({
      'fail-on': 'warning',
      values: true,
      format: 'text',
    });
  });

  it('treats everything after -- as operands', () => {
    expect(parseArgs(['check', '--', '--format'], COMMANDS).operands).toEqual(['--format']);
  });

  it('reads short aliases of the global options', () => {
    expect(parseArgs(['-h'], COMMANDS).options.help).toBe(true);
    expect(parseArgs(['-V'], COMMANDS).options.version).toBe(true);
    expect(parseArgs(['explain', '-h'], COMMANDS)).toMatchObject({ command: 'explain', options: { help: true } });
  });

  it('rejects mistakes with one-line messages', () => {
    const cases: Array<[string[], string]> = [
      [['lint'], "unknown command 'lint'"],
      [['check', '--colour'], "unknown option '--colour'"],
      [['check', '--format', 'xml'], "option '--format' must be one of text, json, sarif, markdown; got 'xml'"],
      [['check', '--format'], "option '--format' needs a value (one of text, json, sarif, markdown)"],
      [['check', '--values=yes'], "option '--values' takes no value"],
      [['explain', '--format', 'json'], "option '--format' does not apply to 'explain'"],
      [['explain', 'a', 'b'], "'explain' takes at most 1 operand, got 2"],
      [['--values'], "option '--values' needs a command"],
      [['check', '-hV'], "unknown option '-hV' (short options cannot be combined)"],
      // A near miss names what was probably meant.
      [['chek'], "unknown command 'chek'; did you mean 'check'?"],
      [['check', '--formt', 'json'], "unknown option '--formt'; did you mean '--format'?"],
      [['check', '--fail-on=warn'], "option '--fail-on' must be one of error, warning, info, never; got 'warn'"],
      [
        ['check', '--format', 'jsn'],
        "option '--format' must be one of text, json, sarif, markdown; got 'jsn'; did you mean 'json'?",
      ],
      [['check', '--base-line', 'b.json'], "unknown option '--base-line'; did you mean '--baseline'?"],
    ];
    for (const [argv, message] of cases) {
      const got = usageMessage(argv);
      expect(got).toBe(message);
      expect(got).not.toContain('\n');
    }
  });

  it('documents every option in the help of the commands that take it', () => {
    const help = usageText('episcope', COMMANDS, COMMANDS[0]);
    for (const name of COMMANDS[0].options) expect(help).toContain(`--${name}`);
    expect(help).toContain('(default: error)');
    const top = usageText('episcope', COMMANDS);
    for (const c of COMMANDS) expect(top).toContain(`${c.name} ${c.operands}`);
    expect(new Set(OPTIONS.map((o) => o.name)).size).toBe(OPTIONS.length);
  });
});
