import { readFileSync } from 'node:fs';
import * as path from 'node:path';
import { load } from 'js-yaml';
import { describe, expect, it } from 'vitest';
import { cli } from '../cli/cli-harness';

const ROOT = path.resolve(__dirname, '..', '..');
const workflowText = readFileSync(path.join(ROOT, 'examples', 'ci', 'episcope.yml'), 'utf8');

interface Step {
  name?: string;
  uses?: string;
  run?: string;
  if?: string;
  with?: Record<string, unknown>;
}

describe('GitHub Actions recipe', () => {
  const workflow = load(workflowText) as {
    on: Record<string, unknown>;
    permissions: Record<string, string>;
    jobs: Record<string, { steps: Step[] }>;
  };
  const steps = workflow.jobs.check.steps;

  it('is the one shown in the README', () => {
    const readme = readFileSync(path.join(ROOT, 'README.md'), 'utf8');
    expect(readme).toContain(`\`\`\`yaml\n${workflowText}\`\`\``);
  });

  it('runs on pull requests with the permissions its uploads need', () => {
    expect(Object.keys(workflow.on)).toEqual(['pull_request']);
    expect(workflow.permissions).toEqual({ contents: 'read', 'security-events': 'write', 'pull-requests': 'write' });
  });

  it('uploads SARIF and comments only for pull requests from the repository itself', () => {
    const upload = steps.find((s) => s.uses?.startsWith('github/codeql-action/upload-sarif@'));
    expect(upload?.with?.sarif_file).toBe('episcope.sarif');
    expect(upload?.if).toContain("steps.trust.outputs.fork == 'false'");
    const comment = steps.find((s) => s.run?.includes('gh pr comment'));
    expect(comment?.if).toContain("steps.trust.outputs.fork == 'false'");
    expect(comment?.run).toContain('--body-file episcope-summary.md');
    // Forks get --no-exec; the trust step decides it from the head repository.
    const trust = steps.find((s) => s.name === 'Trust');
    expect(trust?.run).toMatch(/echo "exec=--no-exec"/);
  });

  it('uses only options the command line knows, and every check passes the trust flag', async () => {
    const commands = steps
      .flatMap((s) => (s.run ?? '').replace(/\\\n\s*/g, ' ').split('\n'))
      .filter((line) => /episcope"? check/.test(line));
    expect(commands).toHaveLength(3);
    for (const line of commands) {
      expect(line).toContain('${{ steps.trust.outputs.exec }}');
      // The command line's own parser checks every option and value; with --help it stops there.
      for (const exec of ['', '--no-exec']) {
        const argv = line
          .slice(line.indexOf('check'))
          .replace(/\s*(\|\||>).*$/, '')
          .replace('${{ steps.trust.outputs.exec }}', exec)
          .replace(/"\$RUNNER_TEMP\/baseline\.json"/, 'baseline.json')
          .replace('$SPECS', 'specs')
          .split(/\s+/)
          .filter(Boolean);
        const parsed = await cli([...argv, '--help']);
        expect([argv.join(' '), parsed.code, parsed.stderr]).toEqual([argv.join(' '), 0, '']);
      }
    }
    expect(commands.map((c) => /--format (\w+)/.exec(c)?.[1])).toEqual(['json', 'sarif', 'markdown']);
    expect(commands[2]).toContain('--baseline "$RUNNER_TEMP/baseline.json"');
    // The gate step fails the job with the comparison's status, after the uploads.
    expect(steps[steps.length - 1].run).toBe('exit ${{ steps.compare.outputs.status }}');
  });
});
