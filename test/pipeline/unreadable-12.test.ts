/**
 * A document that cannot be read as a spec says why it was not analysed: too large, not JSON, empty
 * or nested too deeply, never what the empty spec read from it lacks (issue 12, item 11).
 */
import { rmSync, writeFileSync } from 'node:fs';
import * as path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { analyzeJsonText } from '../../server/src/analyze';
import { MAX_DOCUMENT_LENGTH } from '../../server/src/load/json';
import { cli, tempFolder } from '../cli/cli-harness';

const VALID =
  '{"discount": 0.9, "start": "a", "actions": ["go"], "states": {"a": {}, "g": {"terminal": "goal"}}, "transitions": [{"from": "a", "action": "go", "to": "g", "reward": 1}]}';

describe('the reason a document was not analysed', () => {
  it('a valid spec padded past the size limit (17 MB) is too large, not without a discount', () => {
    const text = VALID + ' '.repeat(17 * 1024 * 1024 - VALID.length);
    expect(text.length).toBeGreaterThan(MAX_DOCUMENT_LENGTH);
    const report = analyzeJsonText('big.mdp.json', text);
    expect(report.notAnalysed).toBe('the document is 17.0 MB, more than the 16 MB Episcope reads from a JSON spec');
  });

  it('a text file is not valid JSON, with the place of the first syntax error', () => {
    const report = analyzeJsonText('notes.mdp.json', 'shopping list\nmilk, eggs\n');
    expect(report.notAnalysed).toMatch(
      /^the document is not valid JSON \(\d+ syntax errors, the first at line 1, column 1: /,
    );
    expect(report.notAnalysed).not.toMatch(/discount/);
  });

  it('a spec with one syntax error that still does not compile names both', () => {
    const report = analyzeJsonText('broken.mdp.json', '{"discount": 0.9 "start": "a", "states": {"a": {}}}');
    // Column 18 is where the missing ',' belongs (1-based, counted by hand).
    expect(report.notAnalysed).toMatch(
      /^the document is not valid JSON \(a syntax error at line 1, column 18: ',' is expected between entries\); of the part that was read: /,
    );
  });

  it('an empty document is empty; nesting deeper than the loader reads is said', () => {
    expect(analyzeJsonText('empty.mdp.json', '  \n').notAnalysed).toBe('the document is empty');
    const deep = '{"a":'.repeat(70) + '1' + '}'.repeat(70);
    expect(analyzeJsonText('deep.mdp.json', deep).notAnalysed).toMatch(
      /^values are nested more than \d+ levels deep, so the document was not read$/,
    );
  });

  it('valid JSON that lacks a discount still says so', () => {
    expect(analyzeJsonText('nodiscount.mdp.json', '{}').notAnalysed).toMatch(/no discount/);
  });

  const folder = tempFolder('unreadable');
  afterAll(() => rmSync(folder, { recursive: true, force: true }));

  it('the CLI prints the real reason', async () => {
    const file = path.join(folder, 'notes.mdp.json');
    writeFileSync(file, 'just some text\n');
    const result = await cli(['check', file], { cwd: folder });
    expect(result.stdout).toMatch(/notes\.mdp\.json: not analysed: the document is not valid JSON \(/);
    expect(result.stdout).not.toMatch(/no discount/);
  });
});
